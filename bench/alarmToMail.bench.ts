import { performance } from 'node:perf_hooks';
import { startMonitor, type Monitor } from '../src/daemon/startMonitor.js';
import { createSmtpTransport, type MailTransport } from '../src/notify/mailTransport.js';
import { getOutboxRowByMessageId } from '../src/store/outboxRepo.js';
import type { BenchOptions, BenchResult } from './benchTypes.js';
import { ceilingRow, infoRow } from './benchTypes.js';
import { BenchError } from './support/benchError.js';
import { benchSiteConfig, loopIdFor } from './support/benchSite.js';
import { createLiveDecoder } from './support/liveDecoder.js';
import { percentile } from './support/percentile.js';
import { silentLogger } from './support/silentLogger.js';
import { startSilentDecoderPort } from './support/silentDecoderPort.js';
import { startSmtpReceiver, type ReceivedMail } from './support/smtpReceiver.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Alarm to mail: from the moment the monitor has confirmed a trip (state change and alarm committed)
 * to the moment a real SMTP server on loopback accepted the alarm's message. The whole monitor runs
 * with its own timers (startMonitor); the grouping window is 0.
 */

const TARGET_P99_MS = 1_000;
/** startMonitor's periodic notification round (NOTIFY_TICK_MS): a wait that long means mail waited for it. */
const NOTIFY_ROUND_MS = 1_000;

interface Sample {
  input: number;
  alarmId: number | null;
  confirmedMs: number | null;
  /** When the outbox worker handed the message to the SMTP transport. */
  sendStartMs: number | null;
  acceptedMs: number | null;
}

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const loops = opts.smoke ? 4 : 64;
  const count = opts.smoke ? 5 : 100;
  const folder = makeTempFolder('mail');
  const decoderPort = await startSilentDecoderPort();
  const samples: Sample[] = [];
  let monitor: Monitor | null = null;
  let unknownMail = 0;
  const sendStarts = new Map<string, number>();
  // Set on the way out: mail that arrives while the monitor stops is not looked up in a closed database.
  let finished = false;
  const onMail = (mail: ReceivedMail) => {
    if (finished) return;
    const row = mail.messageId && monitor ? getOutboxRowByMessageId(monitor.store.db, mail.messageId) : null;
    if (!row) {
      unknownMail += 1;
      return;
    }
    for (const sample of samples) {
      if (sample.acceptedMs !== null || sample.alarmId === null || !row.alarmIds.includes(sample.alarmId)) continue;
      sample.acceptedMs = mail.acceptedMs;
      sample.sendStartMs = sendStarts.get(mail.messageId!) ?? null;
      // Acknowledge and let the node pulse again, so the loop returns to normal and can trip later.
      monitor!.core.alarmAction({ kind: 'ack', alarmId: sample.alarmId, actor: 'bench', note: null }, Date.now());
      decoder.setAlive(sample.input, true);
    }
  };
  const smtp = await startSmtpReceiver(onMail);
  const config = benchSiteConfig({
    loops,
    port: decoderPort.url,
    dbPath: folder.path('site.db'),
    extra: {
      contacts: [{ id: 'desk', name: 'Bench desk', email: 'desk@marrowby-farm.example' }],
      escalation: { default: { steps: [{ after: '0m', notify: ['desk'] }] } },
      mail: {
        from: 'Marrowby monitor <monitor@marrowby-farm.example>',
        smtp: { host: '127.0.0.1', port: smtp.port, secure: false, timeout: '5s' },
        group_window: 0,
      },
    },
  });

  // The real SMTP transport, with the moment each send starts noted: splits the figure into the wait
  // for the notification round and the SMTP exchange itself.
  const smtpTransport = createSmtpTransport(config.mail.smtp!, process.env);
  const transport: MailTransport = {
    description: smtpTransport.description,
    send(message, options) {
      sendStarts.set(message.messageId, performance.now());
      return smtpTransport.send(message, options);
    },
    verify: () => smtpTransport.verify(),
    close: () => smtpTransport.close(),
  };

  const checkConfirmed = () => {
    const waiting = samples.filter((s) => s.alarmId === null);
    if (waiting.length === 0 || !monitor) return;
    const open = monitor.core.openAlarms();
    for (const sample of waiting) {
      const alarm = open.find((a) => a.loopId === loopIdFor(sample.input) && a.condition === 'tripped' && a.active && a.state === 'unacknowledged');
      if (!alarm) continue;
      sample.alarmId = alarm.id;
      sample.confirmedMs = performance.now();
    }
  };
  const decoder = createLiveDecoder({
    loops,
    feed(lines) {
      for (const line of lines) monitor!.core.line('main', line, Date.now());
      // core.line commits the state change and the alarm before it returns: that is "confirmed".
      checkConfirmed();
    },
  });

  try {
    monitor = await startMonitor({ config, configDir: folder.dir, logger: silentLogger(), transport, listen: false, announce: false });
    await waitUntil(() => monitor!.core.linkOf('main')?.state === 'connected', 10_000, 'the monitor to connect to the decoder port');
    decoder.start();
    await waitUntil(() => config.loops.every((l) => monitor!.core.loopLive(l.id)?.state === 'healthy'), 10_000, 'every loop to become healthy');

    for (let k = 0; k < count; k++) {
      const input = (k % loops) + 1;
      await waitUntil(() => monitor!.core.loopLive(loopIdFor(input))?.state === 'healthy' && !samples.some((s) => s.input === input && s.acceptedMs === null), 15_000, `${loopIdFor(input)} to be healthy again`);
      decoder.setAlive(input, false);
      samples.push({ input, alarmId: null, confirmedMs: null, sendStartMs: null, acceptedMs: null });
      // Trips land at random phases of the notification round, > 1 round apart so each is its own mail.
      await sleep(NOTIFY_ROUND_MS + 50 + Math.random() * NOTIFY_ROUND_MS);
    }
    await waitUntil(() => samples.every((s) => s.acceptedMs !== null), 10_000, 'every alarm mail to arrive').catch(() => undefined);
  } finally {
    finished = true;
    decoder.stop();
    await monitor?.stop('benchmark finished', 3000).catch(() => undefined);
    await smtp.close();
    await decoderPort.close();
    folder.remove();
  }

  const delivered = samples.filter((s) => s.confirmedMs !== null && s.acceptedMs !== null);
  if (delivered.length === 0) throw new BenchError('PW_BENCH_NO_MAIL', 'no alarm mail reached the SMTP server');
  const latencies = delivered.map((s) => s.acceptedMs! - s.confirmedMs!);
  const p99 = percentile(latencies, 99);
  const timed = delivered.filter((s) => s.sendStartMs !== null);
  const waits = timed.map((s) => s.sendStartMs! - s.confirmedMs!);
  const exchanges = timed.map((s) => s.acceptedMs! - s.sendStartMs!);
  const missing = samples.length - delivered.length;
  return {
    name: 'alarm-to-mail',
    title: 'Alarm to mail: trip confirmed → accepted by SMTP on loopback',
    rows: [
      infoRow('confirmed → accepted, p50', percentile(latencies, 50), 'ms'),
      ceilingRow('confirmed → accepted, p99', p99, TARGET_P99_MS, missing === 0),
      infoRow('of which: confirmed → SMTP send starts, p99', percentile(waits, 99), 'ms'),
      infoRow('of which: SMTP exchange (send start → accepted), p99', percentile(exchanges, 99), 'ms'),
      infoRow('alarms measured', delivered.length, 'alarms'),
      ...(missing > 0 ? [infoRow('alarms whose mail never arrived', missing, 'alarms')] : []),
    ],
    notes: [
      `${count} trips over ${loops} loops fed live (1 ms pulse every 500 ms, TICK every 100 ms) into the running monitor; each trip acknowledged once its mail arrived. Grouping window 0; SMTP without TLS or AUTH on 127.0.0.1.`,
      `"Confirmed → SMTP send starts" is the time until the outbox worker hands the message to the SMTP transport (grouping window 0, digest, outbox commit, the notifier waking up); "SMTP exchange" is a fresh nodemailer connection to the receiver until it accepts the DATA.`,
      ...(percentile(waits, 99) >= 0.9 * NOTIFY_ROUND_MS
        ? [`The wait reaches the ${NOTIFY_ROUND_MS} ms notification round: mail waits for the next round. Waking the notifier when a commit queues a notice that is due would take the round out of the figure.`]
        : []),
      ...(unknownMail > 0 ? [`${unknownMail} received message(s) not found in the outbox by Message-ID.`] : []),
    ],
  };
}

function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms));
}

async function waitUntil(check: () => boolean, timeoutMs: number, what: string): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new BenchError('PW_BENCH_TIMEOUT', `timed out waiting for ${what}`);
    await sleep(10);
  }
}
