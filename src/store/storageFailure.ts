/** Why the database cannot be written right now, in words a farm-office user can act on. */
export const STORAGE_FAILURE_KINDS = ['disk-full', 'read-only', 'io-error', 'corrupt', 'cannot-open', 'busy', 'file-gone'] as const;
export type StorageFailureKind = (typeof STORAGE_FAILURE_KINDS)[number];

export interface StorageFailure {
  kind: StorageFailureKind;
  /** SQLite's extended result code name, e.g. SQLITE_IOERR_WRITE. */
  sqliteCode: string;
  /** The commit label that hit it. */
  label: string;
  message: string;
}

const KIND_BY_PREFIX: ReadonlyArray<readonly [string, StorageFailureKind]> = [
  ['SQLITE_FULL', 'disk-full'],
  ['SQLITE_READONLY', 'read-only'],
  ['SQLITE_IOERR', 'io-error'],
  ['SQLITE_CORRUPT', 'corrupt'],
  ['SQLITE_NOTADB', 'corrupt'],
  ['SQLITE_CANTOPEN', 'cannot-open'],
  ['SQLITE_BUSY', 'busy'],
  ['SQLITE_PROTOCOL', 'busy'],
];

const ADVICE: Record<StorageFailureKind, string> = {
  'disk-full': 'the disk is full: free space on the data folder\'s disk',
  'read-only': 'the database or its folder cannot be written: check permissions and whether the disk was remounted read-only',
  'io-error': 'the disk reported an input/output error: check the disk and its cable, and the system log',
  corrupt: 'the database file is damaged: stop pairwatch and restore the latest backup (`pairwatch restore FILE`)',
  'cannot-open': 'the database file cannot be opened: check the data folder exists and is writable',
  busy: 'another program keeps the database locked: stop it (a backup or a manual sqlite3 session)',
  'file-gone':
    'the database file was deleted or replaced under the running monitor: nothing more is written to it (state changes and alarms are held in memory, alarm mail goes out directly); ' +
    'stop the monitor (sudo systemctl stop pairwatch), which saves what it holds into an unsaved-alarms file, put the database back (pairwatch restore FILE from the backups), then start it again',
};

/** A storage failure found by watching the file rather than by SQLite: `what` says what was seen. */
export function fileGoneFailure(what: string, label: string): StorageFailure {
  return { kind: 'file-gone', sqliteCode: 'PW_DB_FILE_GONE', label, message: `${what}: ${ADVICE['file-gone']}` };
}

/** Classifies a thrown value; null when it is not a storage fault (a bug, a constraint) and retrying cannot help. */
export function storageFailureOf(error: unknown, label: string): StorageFailure | null {
  const code = (error as { code?: unknown } | null)?.code;
  if (typeof code !== 'string') return null;
  const entry = KIND_BY_PREFIX.find(([prefix]) => code === prefix || code.startsWith(`${prefix}_`));
  if (!entry) return null;
  const kind = entry[1];
  return { kind, sqliteCode: code, label, message: `cannot write the database while storing ${label}: ${ADVICE[kind]} (${code})` };
}
