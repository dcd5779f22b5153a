import { badInput } from '../webErrors.js';
import { foldFreeText, freeTextProblem } from './freeText.js';

/** A urlencoded form body as the form parser gives it; anything else counts as an empty form. */
export function formBody(body: unknown): Record<string, unknown> {
  return body !== null && typeof body === 'object' && !Array.isArray(body) ? (body as Record<string, unknown>) : {};
}

/** One text field of a form: undefined when absent, a 400 naming it when sent twice or too long. */
export function formField(body: Record<string, unknown>, name: string, maxLength = 1000): string | undefined {
  const value = body[name];
  if (value === undefined) return undefined;
  if (typeof value !== 'string') throw badInput(name, 'must be given only once');
  if (value.length > maxLength) throw badInput(name, `must be at most ${maxLength} characters`);
  return value;
}

export function requiredFormField(body: Record<string, unknown>, name: string, maxLength = 1000): string {
  const value = formField(body, name, maxLength)?.trim();
  if (!value) throw badInput(name, 'is required');
  return value;
}

/** A note or reason typed by a person: folded and checked by the free-text rule, trimmed; undefined when empty. */
export function freeTextField(body: Record<string, unknown>, name: string, maxLength = 1000): string | undefined {
  const raw = formField(body, name, maxLength);
  if (raw === undefined) return undefined;
  const folded = foldFreeText(raw);
  // Checked before the trim, which would silently cut VT and FF: control characters are refused, not cut.
  const problem = freeTextProblem(folded);
  if (problem) throw badInput(name, problem);
  const trimmed = folded.trim();
  return trimmed === '' ? undefined : trimmed;
}

export function requiredFreeTextField(body: Record<string, unknown>, name: string, maxLength = 1000): string {
  const value = freeTextField(body, name, maxLength);
  if (!value) throw badInput(name, 'is required');
  return value;
}
