import { StoreError } from './storeError.js';

/** The store's API speaks epoch ms; its columns hold ISO 8601 UTC text, which sorts as time does. */
export function toIso(ms: number): string {
  return new Date(ms).toISOString();
}

export function toIsoOrNull(ms: number | null | undefined): string | null {
  return ms === null || ms === undefined ? null : toIso(ms);
}

/** `where` names the column, so a bad row is reported by name rather than as NaN further on. */
export function fromIso(text: string, where: string): number {
  const ms = Date.parse(text);
  if (Number.isNaN(ms)) throw new StoreError('PW_STORE_BAD_ROW', `${where}: "${text}" is not an ISO 8601 time`);
  return ms;
}

export function fromIsoOrNull(text: string | null, where: string): number | null {
  return text === null ? null : fromIso(text, where);
}
