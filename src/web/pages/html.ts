/**
 * The one HTML helper: a tagged template that escapes every interpolated value unless it is already
 * `SafeHtml` (the result of another `html` call). Loop names, notes, user names — all text that came
 * from a person or a config file — go through here, so escaping cannot be forgotten in one place.
 */

const SAFE_BRAND: unique symbol = Symbol('pairwatch.safeHtml');

export interface SafeHtml {
  readonly [SAFE_BRAND]: true;
  readonly value: string;
  toString(): string;
}

function makeSafe(value: string): SafeHtml {
  return { [SAFE_BRAND]: true, value, toString: () => value };
}

export function isSafeHtml(value: unknown): value is SafeHtml {
  return typeof value === 'object' && value !== null && SAFE_BRAND in value;
}

const ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;', '`': '&#96;' };

/** Escapes text for element content and quoted attribute values alike. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"'`]/g, (ch) => ESCAPES[ch]!);
}

function render(value: unknown): string {
  if (value === null || value === undefined || value === false) return '';
  if (isSafeHtml(value)) return value.value;
  if (Array.isArray(value)) return value.map(render).join('');
  return escapeHtml(String(value));
}

export function html(strings: TemplateStringsArray, ...values: unknown[]): SafeHtml {
  let out = strings[0] ?? '';
  for (let i = 0; i < values.length; i++) out += render(values[i]) + (strings[i + 1] ?? '');
  return makeSafe(out);
}

/** Marks markup this module's callers built themselves (never user text) as safe. */
export function trustedHtml(markup: string): SafeHtml {
  return makeSafe(markup);
}
