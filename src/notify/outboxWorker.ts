import type { Database } from 'better-sqlite3';
import {
  deferOutbox,
  dueOutbox,
  markOutboxFailed,
  markOutboxSent,
  nextOutboxDueAt,
  recordMailAudit,
  type OutboxRow,
} from '../store/outboxRepo.js';
import { MailSendError, toMailSendError } from './mailSendError.js';
import type { MailSendResult, MailTransport } from './mailTransport.js';
import type { NotifyLogger } from './notifyLogger.js';
import { retryDelayMs } from './retryDelay.js';

export interface OutboxWorkerOptions {
  db: Database;
  transport: Pick<MailTransport, 'send' | 'description'>;
  now: () => number;
  /** Consecutive failed attempts before onFailing (config mail.failing_after). */
  failingAfter: number;
  retryFirstMs: number;
  retryMaxMs: number;
  /** Share of a retry delay jitter may take off (0..1); default 0.1. */
  jitterRatio?: number;
  /** True when "mail failing" is already raised (after a restart), so the first success clears it. */
  initiallyFailing?: boolean;
  /** Rows tried per runOnce; default 50. */
  batchSize?: number;
  onFailing(reason: string): void;
  onRecovered(): void;
  onSent?(row: OutboxRow, result: MailSendResult): void;
  onFailed?(row: OutboxRow, err: MailSendError): void;
  logger: NotifyLogger;
}

export interface RunResult {
  sent: number;
  failed: number;
  /** Due rows not tried because the link was found down; moved to the next retry time. */
  deferred: number;
}

export interface OutboxWorker {
  /** Tries every due row once, oldest due first. Store errors propagate (the daemon reports storage failing). */
  runOnce(): Promise<RunResult>;
  /** When the next pending row is due; null when the outbox is empty. The daemon sets its timer from this. */
  nextDueAt(): number | null;
  /** Whether "mail failing" is currently raised by this worker. */
  isFailing(): boolean;
}

/**
 * The outbox worker. Rows are only ever marked sent or rescheduled, never deleted, so nothing is lost;
 * a restart simply finds the pending rows again. Delivery is at least once: a crash between the
 * server's acceptance and marking the row sends it again, with the same Message-ID.
 */
export function createOutboxWorker(options: OutboxWorkerOptions): OutboxWorker {
  const { db, transport, logger } = options;
  const jitterRatio = options.jitterRatio ?? 0.1;
  const batchSize = options.batchSize ?? 50;
  let consecutiveFailures = 0;
  let failing = options.initiallyFailing ?? false;
  let running: Promise<RunResult> | null = null;

  const call = (name: string, fn: () => void) => {
    try {
      fn();
    } catch (err) {
      // A callback's bug must not stop mail; it is logged where someone will see it.
      logger.error({ err, callback: name }, 'outbox worker callback failed');
    }
  };

  const sentTx = db.transaction((row: OutboxRow, at: number, result: MailSendResult) => {
    markOutboxSent(db, row.id, at);
    recordMailAudit(db, {
      at,
      action: 'mail-sent',
      alarmIds: row.alarmIds,
      note: `${row.subject} → ${result.accepted.join(', ') || row.to.join(', ')} (${result.response})`.slice(0, 1000),
    });
  });

  const failedTx = db.transaction((row: OutboxRow, at: number, nextAttemptAt: number, error: MailSendError) => {
    markOutboxFailed(db, row.id, nextAttemptAt, error.message);
    recordMailAudit(db, {
      at,
      action: 'mail-failed',
      alarmIds: row.alarmIds,
      note: `${row.subject}: attempt ${row.attempts + 1} failed: ${error.message}; next try ${new Date(nextAttemptAt).toISOString()}`.slice(0, 1000),
    });
  });

  const deferTx = db.transaction((rows: readonly OutboxRow[], until: number) => {
    for (const row of rows) deferOutbox(db, row.id, until);
  });

  async function runBatch(): Promise<RunResult> {
    const result: RunResult = { sent: 0, failed: 0, deferred: 0 };
    const rows = dueOutbox(db, options.now(), batchSize);
    for (let i = 0; i < rows.length; i++) {
      const row = rows[i]!;
      let outcome: { ok: true; value: MailSendResult } | { ok: false; error: MailSendError };
      try {
        outcome = { ok: true, value: await transport.send(row, { date: row.createdAt }) };
      } catch (err) {
        outcome = { ok: false, error: toMailSendError(err, transport.description) };
      }
      const at = options.now();
      if (outcome.ok) {
        sentTx(row, at, outcome.value);
        result.sent++;
        consecutiveFailures = 0;
        logger.info({ messageId: row.messageId, to: row.to, subject: row.subject, attempts: row.attempts + 1, response: outcome.value.response }, `mail sent: ${row.subject}`);
        call('onSent', () => options.onSent?.(row, outcome.value));
        if (failing) {
          failing = false;
          call('onRecovered', () => options.onRecovered());
        }
        continue;
      }
      const error = outcome.error;
      const nextAttemptAt = at + retryDelayMs(row.attempts + 1, { firstMs: options.retryFirstMs, maxMs: options.retryMaxMs, jitterRatio, jitterKey: row.id });
      failedTx(row, at, nextAttemptAt, error);
      result.failed++;
      consecutiveFailures++;
      logger.warn({ messageId: row.messageId, attempts: row.attempts + 1, error: error.message, nextAttemptAt: new Date(nextAttemptAt).toISOString() }, 'mail not sent, will retry');
      call('onFailed', () => options.onFailed?.(row, error));
      if (!failing && consecutiveFailures >= options.failingAfter) {
        failing = true;
        call('onFailing', () => options.onFailing(`${consecutiveFailures} attempts in a row failed; last: ${error.message}`));
      }
      if (error.scope === 'link') {
        // Nothing gets through a down link: hold the rest of this batch back with the failed row rather
        // than hammering the server; mail queued later is still tried at once.
        const rest = rows.slice(i + 1);
        deferTx(rest, nextAttemptAt);
        result.deferred += rest.length;
        break;
      }
    }
    return result;
  }

  return {
    runOnce() {
      // One batch at a time: a second call while sending shares the first one's result.
      if (!running) {
        running = runBatch().finally(() => {
          running = null;
        });
      }
      return running;
    },
    nextDueAt() {
      return nextOutboxDueAt(db);
    },
    isFailing() {
      return failing;
    },
  };
}
