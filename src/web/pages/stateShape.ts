import { html, trustedHtml, type SafeHtml } from './html.js';
import type { BoardState } from './stateWords.js';

/**
 * One silhouette per state, so the state reads without colour (and in a black-and-white screenshot):
 * round with tick = healthy, triangle = tripped, broken ring = open, diamond with bar = shorted,
 * square with slash = offline, dashed ring = not known, flat bar = out of service, and a hollow ring with a
 * tick for a loop back to normal whose alarm still needs acknowledging (drawn in the attention colour).
 * Drawn in currentColor; the words beside the shape carry the meaning, so the shape is aria-hidden.
 */
const SHAPES = {
  healthy:
    '<circle cx="16" cy="16" r="13" fill="currentColor"/><path d="M10 16.5l4 4 8-9" fill="none" stroke="#fff" stroke-width="3" stroke-linecap="round" stroke-linejoin="round"/>',
  tripped:
    '<path d="M16 2.5 30.5 28.5H1.5Z" fill="currentColor"/><path d="M16 11v8" stroke="#fff" stroke-width="3.2" stroke-linecap="round"/><circle cx="16" cy="23.8" r="1.9" fill="#fff"/>',
  open: '<path d="M19.6 4.6A12 12 0 0 1 27.4 19.6M23.5 25.4A12 12 0 0 1 4.6 19.6M4.6 12.4A12 12 0 0 1 12.4 4.6" fill="none" stroke="currentColor" stroke-width="4"/>',
  shorted: '<path d="M16 1.5 30.5 16 16 30.5 1.5 16Z" fill="currentColor"/><path d="M9 16h14" stroke="#fff" stroke-width="3.5" stroke-linecap="round"/>',
  offline:
    '<rect x="4" y="4" width="24" height="24" rx="2" fill="none" stroke="currentColor" stroke-width="3.5"/><path d="M8.5 23.5 23.5 8.5" stroke="currentColor" stroke-width="3.5" stroke-linecap="round"/>',
  unknown:
    '<circle cx="16" cy="16" r="11.5" fill="none" stroke="currentColor" stroke-width="3" stroke-dasharray="4.5 3.5"/><circle cx="16" cy="16" r="3" fill="currentColor"/>',
  'out-of-service': '<rect x="3" y="12" width="26" height="8" rx="2" fill="currentColor"/>',
  'back-to-normal':
    '<circle cx="16" cy="16" r="12.5" fill="none" stroke="currentColor" stroke-width="3.5"/><path d="M10 16.5l4 4 8-9" fill="none" stroke="currentColor" stroke-width="3.5" stroke-linecap="round" stroke-linejoin="round"/>',
} as const satisfies Record<ShapeName, string>;

/** A board state, or a loop back to normal whose alarm nobody has acknowledged yet. */
export type ShapeName = BoardState | 'back-to-normal';

export const SHAPE_NAME = {
  healthy: 'round with a tick',
  tripped: 'triangle',
  open: 'broken ring',
  shorted: 'diamond with a bar',
  offline: 'square with a slash',
  unknown: 'dashed ring',
  'out-of-service': 'flat bar',
  'back-to-normal': 'hollow ring with a tick',
} as const satisfies Record<ShapeName, string>;

export function stateShape(state: ShapeName, size = 32): SafeHtml {
  // SHAPES are fixed strings of this module, never user text.
  return html`<svg class="shape shape-${state}" width="${size}" height="${size}" viewBox="0 0 32 32" aria-hidden="true" focusable="false">${trustedHtml(SHAPES[state])}</svg>`;
}
