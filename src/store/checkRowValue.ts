import { StoreError } from './storeError.js';

/** Text from a column that must be one of a known set; a stray value is reported by column, not passed on. */
export function checkRowValue<T extends string>(value: string, allowed: readonly T[], where: string): T {
  if ((allowed as readonly string[]).includes(value)) return value as T;
  throw new StoreError('PW_STORE_BAD_ROW', `${where}: unexpected value "${value}" (expected one of ${allowed.join(', ')})`);
}
