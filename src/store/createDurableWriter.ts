// The durable writer: commits what must not be lost, and turns a failing disk into a storage failure the monitor can report.
import type { Store } from './openStore.js';

/**
 * Work for the store that must not be lost when the disk fails. `work` runs inside one transaction and
 * may run again later (after a storage failure rolled it back), so it must only touch the store: compute
 * everything else before calling commit.
 */
export type StoreWork = (store: Store) => void;

export interface CommitOptions {
  /**
   * High-rate data (raw edges, line-quality counters) whose oldest batches may be dropped, and counted,
   * when the in-memory queue is full. State changes, alarms and audit rows are never droppable.
   */
  droppable?: boolean;
}

/** written: committed now. queued: kept in memory until the disk takes it. rejected: not a storage fault; see onRejected. */
export type CommitOutcome = 'written' | 'queued' | 'rejected';
export type FlushOutcome = 'idle' | 'written' | 'failing';

export interface DurableWriterStatus {
  /** The storage failure in progress, or null when writing normally. */
  failing: StorageFailure | null;
  failingSinceMs: number | null;
  pending: number;
  /** Droppable batches given up since the store started failing (reset on recovery). */
  droppedBatches: number;
}

export interface RecoveryInfo {
  written: number;
  droppedBatches: number;
  failedForMs: number;
}

export interface DurableWriterOptions {
  store: Store;
  /** Called once when writing starts failing: the shell raises "storage failing". */
  onFailing(failure: StorageFailure): void;
  /** Called once the queue has been written after a failure: the shell clears "storage failing". */
  onRecovered(info: RecoveryInfo): void;
  /** Work that failed for a reason retrying cannot fix (a bug, a constraint): dropped and reported here. */
  onRejected?(label: string, error: unknown): void;
  /** While failing, a commit also retries the queue when this long has passed since the last attempt. */
  retryMs?: number;
  /** Queue bound; beyond it the oldest droppable batch goes first. Never-droppable work is kept regardless. */
  maxQueued?: number;
  /** Queued items written per transaction when catching up. */
  batchSize?: number;
  now?: () => number;
  /**
   * Asked before every transaction: a failure here (the database file deleted or replaced under us)
   * means the work is held as if the disk refused it, never written to a file nobody can open again.
   */
  guard?: () => StorageFailure | null;
}

export interface DurableWriter {
  commit(label: string, work: StoreWork, options?: CommitOptions): CommitOutcome;
  /** Retries the queue in order; the shell calls it on a timer every `retryMs`. Never throws. */
  flush(): FlushOutcome;
  pending(): number;
  /** How many queued items carry each label: what a stop with the disk still failing must report. */
  queuedLabels(): Record<string, number>;
  status(): DurableWriterStatus;
  /** Runs the guard now (the shell calls it on a timer, so a quiet monitor notices too). */
  check(): StorageFailure | null;
  readonly retryMs: number;
}

/** Thrown inside the writer when the guard refuses: carries the failure to the catch that queues. */
class GuardRefusal extends Error {
  constructor(readonly failure: StorageFailure) {
    super(failure.message);
  }
}

const failureOf = (error: unknown, label: string): StorageFailure | null =>
  error instanceof GuardRefusal ? { ...error.failure, label } : storageFailureOf(error, label);

interface QueuedWork {
  label: string;
  work: StoreWork;
  droppable: boolean;
}

export function createDurableWriter(options: DurableWriterOptions): DurableWriter {
  const { store } = options;
  const retryMs = options.retryMs ?? 5_000;
  const maxQueued = options.maxQueued ?? 100_000;
  const batchSize = Math.max(1, options.batchSize ?? 500);
  const now = options.now ?? Date.now;

  const queue: QueuedWork[] = [];
  let droppableInQueue = 0;
  let failing: StorageFailure | null = null;
  let failingSinceMs: number | null = null;
  let lastAttemptMs = 0;
  let droppedBatches = 0;
  let writtenSinceFailure = 0;

  const reject = (label: string, error: unknown): void => {
    try {
      // Stryker disable next-line OptionalChaining: without a reporter the call throws a TypeError, which the catch below swallows just the same
      options.onRejected?.(label, error);
    } catch {
      // a failing reporter must not turn into a throw at the caller
    }
  };

  const enterFailing = (failure: StorageFailure): void => {
    const first = failing === null;
    failing = failure;
    if (!first) return;
    failingSinceMs = now();
    writtenSinceFailure = 0;
    try {
      options.onFailing(failure);
    } catch {
      // see reject
    }
  };

  const enqueue = (item: QueuedWork): void => {
    if (queue.length >= maxQueued && droppableInQueue > 0) {
      const oldest = queue.findIndex((q) => q.droppable);
      if (oldest >= 0) {
        queue.splice(oldest, 1);
        // Stryker disable next-line AssignmentOperator: a count too high only costs a search that finds nothing (a count too low is tested)
        droppableInQueue -= 1;
        droppedBatches += 1;
      }
    }
    queue.push(item);
    if (item.droppable) droppableInQueue += 1;
  };

  const removeFront = (count: number): void => {
    for (const item of queue.splice(0, count)) if (item.droppable) droppableInQueue -= 1;
  };

  /**
   * The connection runs synchronous=FULL, so a committed state change or alarm survives a power cut.
   * Batches of only high-rate droppable data are committed with NORMAL (no fsync of their own: a power
   * cut may lose the last of them, never corrupt the file), then FULL is put back for everyone else.
   */
  const inTransaction = (droppableOnly: boolean, run: () => void): void => {
    const refused = options.guard?.();
    if (refused) throw new GuardRefusal(refused);
    if (!droppableOnly) {
      store.transaction(run);
      return;
    }
    // exec, not a statement prepared once: SQLite applies PRAGMA synchronous while compiling it, so a
    // kept statement would change nothing when run again. exec also skips db.pragma()'s result rows.
    store.db.exec('PRAGMA synchronous = NORMAL');
    try {
      store.transaction(run);
    } finally {
      store.db.exec('PRAGMA synchronous = FULL');
    }
  };

  /** One item alone: true when it left the queue (written or rejected), false on a storage failure. */
  const writeOne = (item: QueuedWork): boolean => {
    try {
      inTransaction(item.droppable, () => item.work(store));
      writtenSinceFailure += 1;
      return true;
    } catch (error) {
      const failure = failureOf(error, item.label);
      if (failure) {
        enterFailing(failure);
        return false;
      }
      reject(item.label, error);
      return true;
    }
  };

  const flush = (): FlushOutcome => {
    if (queue.length === 0) return 'idle';
    lastAttemptMs = now();
    while (queue.length > 0) {
      const batch = queue.slice(0, batchSize);
      try {
        inTransaction(
          batch.every((item) => item.droppable),
          () => {
            for (const item of batch) item.work(store);
          },
        );
        removeFront(batch.length);
        writtenSinceFailure += batch.length;
        continue;
      } catch (error) {
        const failure = failureOf(error, batch[0]?.label ?? 'queued work');
        if (failure) {
          enterFailing(failure);
          return 'failing';
        }
        // One item in the batch is bad: go one by one so only that one is rejected.
      }
      for (const item of batch) {
        if (!writeOne(item)) return 'failing';
        removeFront(1);
      }
    }
    if (failing !== null) {
      const info: RecoveryInfo = {
        written: writtenSinceFailure,
        droppedBatches,
        failedForMs: now() - (failingSinceMs ?? now()),
      };
      failing = null;
      failingSinceMs = null;
      droppedBatches = 0;
      try {
        options.onRecovered(info);
      } catch {
        // see reject
      }
    }
    return 'written';
  };

  return {
    retryMs,
    commit(label, work, commitOptions = {}) {
      const item: QueuedWork = { label, work, droppable: commitOptions.droppable === true };
      if (queue.length > 0) {
        // Already failing: keep the order, and try again only when the retry interval has passed.
        enqueue(item);
        if (now() - lastAttemptMs >= retryMs) flush();
        return queue.includes(item) ? 'queued' : 'written';
      }
      try {
        inTransaction(item.droppable, () => work(store));
        return 'written';
      } catch (error) {
        const failure = failureOf(error, label);
        if (!failure) {
          reject(label, error);
          return 'rejected';
        }
        enterFailing(failure);
        lastAttemptMs = now();
        enqueue(item);
        return 'queued';
      }
    },
    flush() {
      try {
        return flush();
      } catch (error) {
        // Only a throwing reporter could get here; keep the promise of never throwing.
        reject('flush', error);
        return failing ? 'failing' : 'written';
      }
    },
    pending() {
      return queue.length;
    },
    queuedLabels() {
      const counts: Record<string, number> = {};
      for (const item of queue) counts[item.label] = (counts[item.label] ?? 0) + 1;
      return counts;
    },
    status() {
      return { failing, failingSinceMs, pending: queue.length, droppedBatches };
    },
    check() {
      const refused = options.guard?.() ?? null;
      if (refused) {
        enterFailing(refused);
        lastAttemptMs = now();
      }
      return refused;
    },
  };
}

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
