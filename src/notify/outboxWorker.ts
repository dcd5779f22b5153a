import type { Database } from 'better-sqlite3';
import type { NoticeAlarm } from '../alarms/noticeTypes.js';
import {
  deferOutbox,
  dueOutbox,
  markOutboxDropped,
  markOutboxFailed,
  markOutboxSent,
  nextOutboxDueAt,
  recordMailAudit,
  releaseHeldOutbox,
  type OutboxRow,
} from '../store/outboxRepo.js';
import { loadNoticeAlarms } from '../store/pendingNoticeRepo.js';
import { countOf } from '../model/plural.js';
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
  /** Reminders not sent because none of their alarms still waited for an acknowledgement (status 'dropped', audited). */
  dropped: number;
}

/**
 * While the server cannot be reached, the oldest waiting mail tries it again at least this often,
 * whatever retry_max says, so the first mail after the server returns is not held by a long back-off.
 * One connection attempt per 30 s is no load on a server; a message the server refuses still backs
 * off to retry_max.
 */
const LINK_RETRY_MAX_MS = 30_000;
/** Batches one runOnce may work through while mail flows, so a large backlog drains in one run but a run still ends. */
const MAX_BATCHES_PER_RUN = 20;

export interface OutboxWorker {
  /**
   * Tries the due rows in the order queued. After any success, mail held back by the link is due at
   * once and the whole backlog goes in the same run. Store errors propagate (the daemon reports storage failing).
   */
  runOnce(): Promise<RunResult>;
  /** When the next pending row is due; null when the outbox is empty. The daemon sets its timer from this. */
  nextDueAt(): number | null;
  /** Whether "mail failing" is currently raised by this worker. */
  isFailing(): boolean;
}

/**
 * The outbox worker. Rows are only ever marked sent, dropped or rescheduled, never deleted, so nothing
 * is lost; a restart simply finds the pending rows again. Delivery is at least once: a crash between
 * the server's acceptance and marking the row sends it again, with the same Message-ID.
 *
 * After an outage (issue 16 item 4): the first mail the server takes releases the whole backlog, which
 * then goes oldest first; per mailbox nothing overtakes an earlier mail (dueOutbox); a reminder whose
 * alarms were all acknowledged, returned to normal or shelved meanwhile is dropped, not sent.
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

  /** Marks the row sent and, in the same transaction, releases the mail a link failure held back; returns how many. */
  const sentTx = db.transaction((row: OutboxRow, at: number, result: MailSendResult): number => {
    markOutboxSent(db, row.id, at);
    recordMailAudit(db, {
      at,
      action: 'mail-sent',
      alarmIds: row.alarmIds,
      note: `${row.subject} → ${result.accepted.join(', ') || row.to.join(', ')} (${result.response})`.slice(0, 1000),
    });
    return releaseHeldOutbox(db, at);
  });

  /** Drops the row when it is an obsolete reminder, deciding on the alarms as committed now; true if dropped. */
  const dropIfObsoleteTx = db.transaction((row: OutboxRow, at: number): boolean => {
    if (!row.reminder) return false;
    const alarms = loadNoticeAlarms(db, row.alarmIds);
    if (!isObsoleteReminder(row, alarms)) return false;
    const why = `not sent: a reminder made obsolete, ${alarms.map((a) => `alarm ${a.id} ${a.state}`).join(', ') || 'its alarms are gone'} before it could go`;
    markOutboxDropped(db, row.id, why);
    recordMailAudit(db, { at, action: 'mail-dropped', alarmIds: row.alarmIds, note: `${row.subject}: ${why}`.slice(0, 1000) });
    return true;
  });

  const failedTx = db.transaction((row: OutboxRow, at: number, nextAttemptAt: number, error: MailSendError) => {
    markOutboxFailed(db, row.id, nextAttemptAt, error.message, error.scope === 'message');
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

  /** Tries the rows in order; 'down' when the link failed (stop this run), 'released' when held mail became due (read again). */
  async function sendRows(rows: readonly OutboxRow[], result: RunResult): Promise<'done' | 'down' | 'released'> {
    for (let i = 0; i < rows.length; i++) {
      const row = rows[i]!;
      if (dropIfObsoleteTx(row, options.now())) {
        result.dropped++;
        logger.info({ messageId: row.messageId, alarmIds: row.alarmIds }, `reminder dropped, its alarms no longer wait for an acknowledgement: ${row.subject}`);
        continue;
      }
      let outcome: { ok: true; value: MailSendResult } | { ok: false; error: MailSendError };
      try {
        outcome = { ok: true, value: await transport.send(row, { date: row.createdAt }) };
      } catch (err) {
        outcome = { ok: false, error: toMailSendError(err, transport.description) };
      }
      const at = options.now();
      if (outcome.ok) {
        const released = sentTx(row, at, outcome.value);
        result.sent++;
        consecutiveFailures = 0;
        logger.info({ messageId: row.messageId, to: row.to, subject: row.subject, attempts: row.attempts + 1, response: outcome.value.response }, `mail sent: ${row.subject}`);
        call('onSent', () => options.onSent?.(row, outcome.value));
        if (failing) {
          failing = false;
          call('onRecovered', () => options.onRecovered());
        }
        if (released > 0) {
          // Released rows may be older than the rest of this batch: read the queue again, in order.
          logger.info({ released }, `mail flows again: ${countOf(released, 'held mail')} due now, oldest first`);
          return 'released';
        }
        continue;
      }
      const error = outcome.error;
      const backOff = retryDelayMs(row.attempts + 1, { firstMs: options.retryFirstMs, maxMs: options.retryMaxMs, jitterRatio, jitterKey: row.id });
      const nextAttemptAt = at + (error.scope === 'link' ? Math.min(backOff, LINK_RETRY_MAX_MS) : backOff);
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
        return 'down';
      }
    }
    return 'done';
  }

  async function runBatch(): Promise<RunResult> {
    const result: RunResult = { sent: 0, failed: 0, deferred: 0, dropped: 0 };
    for (let batch = 0; batch < MAX_BATCHES_PER_RUN; batch++) {
      const rows = dueOutbox(db, options.now(), batchSize);
      if (rows.length === 0) break;
      const outcome = await sendRows(rows, result);
      // A full batch that went through may have more behind it; a short one was the whole queue.
      if (outcome === 'down' || (outcome === 'done' && rows.length < batchSize)) break;
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

/**
 * A reminder (repeat or escalation mail; the caller checks it is one) is obsolete once none of its
 * alarms still waits for an acknowledgement: the engine escalates exactly while an alarm is
 * 'unacknowledged' (active, or latched and cleared), so a reminder about alarms all acknowledged,
 * returned unacknowledged, shelved, out of service or closed asks for something nobody needs to do.
 */
function isObsoleteReminder(row: Pick<OutboxRow, 'alarmIds'>, alarms: ReadonlyArray<Pick<NoticeAlarm, 'state'>>): boolean {
  // A mail about no alarm (the estate's notices) has nothing to go by, so it is never obsolete.
  return row.alarmIds.length > 0 && !alarms.some((a) => a.state === 'unacknowledged');
}
