import { createAlarmRepo, type AlarmRepo } from './alarmRepo.js';
import { createAuditRepo, type AuditRepo, createEventsQuery, type EventsQuery, createStateChangeRepo, type StateChangeRepo } from './history.js';
import { createDecoderSessionRepo, type DecoderSessionRepo } from './decoderSessionRepo.js';
import { createEdgeRepo, type EdgeRepo } from './edgeRepo.js';
import { createKvRepo, type KvRepo } from './kvRepo.js';
import { createLineQualityRepo, type LineQualityRepo } from './lineQualityRepo.js';
import { createLoopStatusRepo, type LoopStatusRepo } from './loopStatusRepo.js';
import { openDatabase, type OpenedDatabase, type SqliteDatabase } from './openDatabase.js';
import { acquireStoreLock, type StoreLock } from './storeLock.js';

export interface OpenStoreOptions {
  path: string;
  migrationsDir?: string;
  busyTimeoutMs?: number;
  /**
   * Take `<path>.lock` for the life of the store (default true): the daemon does, so restore can refuse
   * while it runs. Tools that work beside a running daemon (backup, user, token) pass false.
   */
  lock?: boolean;
  now?: () => number;
  /**
   * Page cache in KiB (`storage.cache_kib`). Unset: the build's default, which for better-sqlite3 is
   * 16 MB rather than SQLite's 2 MB — most of it resident once the file is large.
   */
  cacheKib?: number;
}

export interface Store {
  readonly path: string;
  /** The connection, for repositories that live outside this facade (outbox, users, …). */
  readonly db: SqliteDatabase;
  /** What opening did: created, schema version, migrations applied, pre-migration backup. */
  readonly opened: Omit<OpenedDatabase, 'db'>;
  /** Runs `fn` in one IMMEDIATE transaction (a savepoint when nested); rolled back if it throws. */
  transaction<T>(fn: () => T): T;
  /** Idempotent; releases the lock. */
  close(): void;
  readonly loopStatus: LoopStatusRepo;
  readonly stateChanges: StateChangeRepo;
  readonly decoderSessions: DecoderSessionRepo;
  readonly edges: EdgeRepo;
  readonly lineQuality: LineQualityRepo;
  readonly alarms: AlarmRepo;
  readonly audit: AuditRepo;
  readonly kv: KvRepo;
  readonly events: EventsQuery;
}

export function openStore(options: OpenStoreOptions): Store {
  // The lock comes first: a second daemon must not even migrate the file under the first one.
  const lock: StoreLock | null = options.lock === false ? null : acquireStoreLock(options.path);
  // migrationsDir, busyTimeoutMs and now are openDatabase's own options: passed on as given.
  const { path: _path, lock: _lock, cacheKib: _cacheKib, ...databaseOptions } = options;
  let opened: OpenedDatabase;
  try {
    opened = openDatabase(options.path, databaseOptions);
  } catch (error) {
    lock?.release();
    throw error;
  }
  const { db, ...info } = opened;
  let repos: StoreRepos;
  try {
    // Negative: a size in KiB rather than in pages (SQLite documentation, PRAGMA cache_size).
    if (options.cacheKib !== undefined) db.pragma(`cache_size = ${-Math.max(1, Math.round(options.cacheKib))}`);
    repos = createRepos(db);
  } catch (error) {
    db.close();
    lock?.release();
    throw error;
  }
  let closed = false;

  return {
    ...repos,
    path: options.path,
    db,
    opened: info,
    transaction<T>(fn: () => T): T {
      // IMMEDIATE takes the write lock up front, so a second connection waits (busy_timeout) instead of
      // failing half-way with SQLITE_BUSY when a read turns into a write.
      return db.transaction(fn).immediate();
    },
    close() {
      if (closed) return;
      closed = true;
      try {
        if (db.open) {
          // Stryker disable next-line BlockStatement: PRAGMA optimize only refreshes the query planner's statistics; no data depends on it
          try {
            db.pragma('optimize');
          } catch {
            // only an optimisation; a failing disk must not stop the close
          }
          db.close();
        }
      } finally {
        lock?.release();
      }
    },
  };
}

type StoreRepos = Omit<Store, 'path' | 'db' | 'opened' | 'transaction' | 'close'>;

function createRepos(db: SqliteDatabase): StoreRepos {
  return {
    loopStatus: createLoopStatusRepo(db),
    stateChanges: createStateChangeRepo(db),
    decoderSessions: createDecoderSessionRepo(db),
    edges: createEdgeRepo(db),
    lineQuality: createLineQualityRepo(db),
    alarms: createAlarmRepo(db),
    audit: createAuditRepo(db),
    kv: createKvRepo(db),
    events: createEventsQuery(db),
  };
}
