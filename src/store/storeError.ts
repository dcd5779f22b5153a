// Errors the store raises, with a code a caller can branch on, and the check that a stored text column holds a known value.


/** Every way the store can refuse or fail, as a stable code the CLI, web and logs can branch on. */
export const STORE_ERROR_CODES = [
  'PW_STORE_OPEN_FAILED',
  'PW_STORE_TOO_NEW',
  'PW_STORE_NOT_PAIRWATCH',
  'PW_STORE_MIGRATION_FAILED',
  'PW_STORE_NO_MIGRATIONS',
  'PW_STORE_LOCKED',
  'PW_STORE_BAD_ROW',
  'PW_STORE_BAD_CURSOR',
  'PW_STORE_BACKUP_FAILED',
  'PW_STORE_RESTORE_FAILED',
] as const;
export type StoreErrorCode = (typeof STORE_ERROR_CODES)[number];

export class StoreError extends Error {
  constructor(
    readonly code: StoreErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
    this.name = 'StoreError';
  }
}

export function isStoreError(value: unknown): value is StoreError {
  return value instanceof StoreError;
}

/** A short text for an unknown thrown value, for wrapping into a StoreError message. */
export function describeError(error: unknown): string {
  if (error instanceof Error) {
    const code = (error as { code?: unknown }).code;
    return typeof code === 'string' && !error.message.startsWith(code) ? `${code}: ${error.message}` : error.message;
  }
  return String(error);
}

/** Text from a column that must be one of a known set; a stray value is reported by column, not passed on. */
export function checkRowValue<T extends string>(value: string, allowed: readonly T[], where: string): T {
  if ((allowed as readonly string[]).includes(value)) return value as T;
  throw new StoreError('PW_STORE_BAD_ROW', `${where}: unexpected value "${value}" (expected one of ${allowed.join(', ')})`);
}
