import { afterEach, describe, expect, it } from 'vitest';
import type { Database } from 'better-sqlite3';
import { flushDigests } from '../../src/notify/flushDigests.js';
import { MailSendError } from '../../src/notify/mailSendError.js';
import type { MailSendResult, MailTransport } from '../../src/notify/mailTransport.js';
import { queueNotices } from '../../src/notify/noticeQueue.js';
import { createOutboxWorker } from '../../src/notify/outboxWorker.js';
import { silentLogger } from '../../src/notify/notifyLogger.js';
import { settings } from './helpers/fixtures.js';
import { insertAlarm, openTestDb, type TestDb } from './helpers/notifyDb.js';

/**
 * "mail failing" means failing_after attempts in a row failed. A success in between starts the count
 * again, so an unreliable server that delivers now and then is not reported as down.
 */
const t0 = Date.parse('2026-12-01T03:00:00.000Z');
let t: TestDb | undefined;
afterEach(() => {
  t?.cleanup();
  t = undefined;
});

/** A transport that answers each send from a script: 'fail' (the server refused this message) or 'ok'. */
function scripted(script: Array<'fail' | 'ok'>): Pick<MailTransport, 'send' | 'description'> {
  return {
    description: 'scripted server',
    async send(): Promise<MailSendResult> {
      const next = script.shift();
      if (next === undefined) throw new Error('test script ran out');
      // Message scope: the worker keeps going through the batch, so one runOnce tries every row.
      if (next === 'fail') throw new MailSendError('scripted refusal', 'message', 550, '550 no');
      return { accepted: ['x@example.org'], response: '250 ok' };
    },
  };
}

/** Queues one mail per contact for separate alarms, all due at once, oldest first. */
function queueMails(db: Database, count: number): void {
  for (let i = 0; i < count; i++) {
    const alarmId = insertAlarm(db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 + i });
    queueNotices(db, { kind: 'notify', alarmId, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0 + i, 0);
    flushDigests(db, t0 + i, settings());
  }
}

function run(script: Array<'fail' | 'ok'>, mails: number) {
  t = openTestDb();
  queueMails(t.db, mails);
  const events: string[] = [];
  const worker = createOutboxWorker({
    db: t.db,
    transport: scripted(script),
    now: () => t0 + 60_000,
    failingAfter: 3,
    retryFirstMs: 15_000,
    retryMaxMs: 900_000,
    jitterRatio: 0,
    onFailing: () => events.push('failing'),
    onRecovered: () => events.push('recovered'),
    logger: silentLogger,
  });
  return { worker, events };
}

describe('outbox worker: consecutive failures, reset by a success (failing_after: 3)', () => {
  it('fail, fail, success, fail raises nothing', async () => {
    const { worker, events } = run(['fail', 'fail', 'ok', 'fail'], 4);
    expect(await worker.runOnce()).toMatchObject({ sent: 1, failed: 3 });
    expect(events).toEqual([]);
    expect(worker.isFailing()).toBe(false);
  });

  it('after recovery a single failure does not raise it again; three in a row do', async () => {
    const { worker, events } = run(['fail', 'fail', 'fail', 'ok', 'fail', 'fail', 'ok', 'fail', 'fail', 'fail'], 10);
    await worker.runOnce();
    expect(events).toEqual(['failing', 'recovered', 'failing']);
  });

  it('a success right after recovery, then one failure: still not failing', async () => {
    const { worker, events } = run(['fail', 'fail', 'fail', 'ok', 'fail'], 5);
    await worker.runOnce();
    expect(events).toEqual(['failing', 'recovered']);
    expect(worker.isFailing()).toBe(false);
  });
});
