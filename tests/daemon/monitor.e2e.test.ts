import Database from 'better-sqlite3';
import { openSync, writeSync, closeSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { main } from '../../src/cli/main.js';
import { PassThrough } from 'node:stream';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { startSocatPair, type SocatPair } from '../helpers/socatPair.js';
import { waitFor } from '../helpers/waitFor.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * The whole chain as a user has it: a pseudo-terminal standing in for the USB decoder, read through
 * serialport by the real monitor, states in a real SQLite file, alarms mailed to a real SMTP server.
 * Lines carry decoder time, so they are written much faster than real time; classification must not care.
 */
describe('monitor end to end: pseudo-terminal → serialport → classifier → SQLite → SMTP', () => {
  let tmp: TempDir;
  let socat: SocatPair;
  let smtp: SmtpSink;
  let monitor: Monitor;
  let configFile: string;

  beforeAll(async () => {
    tmp = makeTempDir('pairwatch-e2e-');
    socat = await startSocatPair(tmp.dir);
    smtp = await startSmtpSink({ user: 'monitor', pass: 'pw-test' });
    configFile = join(tmp.dir, 'site.yaml');
    writeFileSync(
      configFile,
      `
site: { name: "Test Farm", timezone: "Europe/London" }
decoders: [{ id: main, port: ${socat.a}, inputs: 4 }]
loops:
  - { id: well-pit, name: "Well pit", decoder: main, input: 1 }
  - { id: pump-house, name: "Pump house", decoder: main, input: 2 }
contacts: [{ id: office, name: "Farm office", email: "office@example.org" }]
escalation: { default: { steps: [{ after: 0m, notify: [office] }], repeat_every: 30m } }
mail:
  from: "pairwatch <monitor@example.org>"
  smtp: { host: 127.0.0.1, port: ${smtp.port}, user: monitor, pass: pw-test }
  group_window: 0s
storage: { path: ${join(tmp.dir, 'site.db')} }
web: { listen: "127.0.0.1:0" }
`,
    );
    const config = loadConfig(configFile);
    monitor = await startMonitor({ config, configDir: tmp.dir, logger: pino({ level: 'silent' }), listen: false, announce: false });
    await waitFor(() => monitor.core.linkOf('main')?.state === 'connected', 10_000, () => 'the monitor to open the pseudo-terminal');
  });

  afterAll(async () => {
    await monitor?.stop('test over', 3000);
    await smtp?.close();
    await socat?.stop();
    tmp?.cleanup();
  });

  it('records each state change at its decoder time and mails the alarm and the trouble', async () => {
    // Decoder time, by hand: both loops pulse every 500 ms from 100 ms. Well pit's node stops after
    // the pulse at 3.1 s (frozen); pump house's cable is cut at 4.0 s.
    const lines = wireScript(4)
      .hello(0)
      .pulses(1, 100_000, 3_200_000)
      .pulses(2, 100_000, 4_000_000)
      .edge(4_000_000, 2, 'O')
      .ticks(0, 6_000_000)
      .build();
    const fd = openSync(socat.b, 'w');
    try {
      for (const { line } of lines) writeSync(fd, `${line}\n`);
    } finally {
      closeSync(fd);
    }

    const db = new Database(join(tmp.dir, 'site.db'), { readonly: true });
    try {
      const changes = () =>
        db.prepare('SELECT loop_id, from_state, to_state, decoder_us FROM state_changes WHERE reason != ? ORDER BY id').all('monitor started') as Array<{
          loop_id: string;
          to_state: string;
          decoder_us: number;
        }>;
      await waitFor(() => changes().length >= 4, 10_000, () => `4 state changes, have ${JSON.stringify(changes())}`);
      // Expected from issue 2's defaults, worked by hand: healthy when the 3rd pulse ends (1.101 s);
      // tripped 1500 ms after the last pulse start (3.1 + 1.5 = 4.6 s); open 200 ms after band O (4.2 s).
      expect(changes().map((c) => [c.loop_id, c.to_state, c.decoder_us])).toEqual([
        ['well-pit', 'healthy', 1_101_000],
        ['pump-house', 'healthy', 1_101_000],
        ['pump-house', 'open', 4_200_000],
        ['well-pit', 'tripped', 4_600_000],
      ]);
    } finally {
      db.close();
    }

    // Both conditions are confirmed within one notify round, so they may arrive as one digest mail.
    const mentions = (name: string) => smtp.messages.some((m) => (m.text ?? '').includes(name));
    await waitFor(() => mentions('Pump house') && mentions('Well pit'), 15_000, () => `mail about both loops, have ${smtp.messages.map((m) => m.subject).join(' | ')}`);
    // The alarm outranks the trouble in the subject; the trouble is in the body.
    const subjects = smtp.messages.map((m) => m.subject ?? '');
    expect(subjects.some((s) => s.startsWith('[ALARM] Test Farm: '))).toBe(true);
    const alarmMail = smtp.messages.find((m) => m.subject?.startsWith('[ALARM]'))!;
    // RFC 3834: automatic mail says so.
    expect(alarmMail.headers.get('auto-submitted')).toBe('auto-generated');
    expect(alarmMail.text).toMatch(/\/ack\/[A-Za-z0-9_-]+/);
  });

  it('acknowledging tells everyone notified, threaded on the first mail (RFC 5322 In-Reply-To)', async () => {
    const alarm = monitor.read.alarms('active').find((a) => a.condition === 'tripped')!;
    expect(alarm.state).toBe('unacknowledged');
    expect(monitor.commands.acknowledge(alarm.id, 'ann', 'heater reset')).toEqual({ ok: true });
    expect(monitor.read.alarm(alarm.id)!.state).toBe('acknowledged');
    const first = smtp.messages.find((m) => m.subject?.startsWith('[ALARM]'))!;
    await waitFor(() => smtp.messages.some((m) => m.inReplyTo === first.messageId && /ann/.test(m.text ?? '')), 15_000, () => 'the acknowledgement mail');
    const ackMail = smtp.messages.find((m) => m.inReplyTo === first.messageId)!;
    expect(ackMail.text).toContain('heater reset');
  });

  it('a script with a token from `pairwatch token create` reads the states and acknowledges over the API', async () => {
    const out = new PassThrough();
    let printed = '';
    out.on('data', (chunk: Buffer) => (printed += chunk.toString()));
    const io = { stdout: out, stderr: new PassThrough(), stdin: new PassThrough(), env: {} };
    expect(await main(['token', 'create', 'night-script', '--role', 'operator', '--config', configFile], io)).toBe(0);
    const token = printed.trim();
    const auth = { authorization: `Bearer ${token}` };

    const loops = (await monitor.web.inject({ method: 'GET', url: '/api/v1/loops', headers: auth })).json() as Array<{ id: string; state: string }>;
    expect(loops.map((l) => [l.id, l.state])).toEqual([
      ['well-pit', 'tripped'],
      ['pump-house', 'open'],
    ]);
    const alarms = (await monitor.web.inject({ method: 'GET', url: '/api/v1/alarms?status=active', headers: auth })).json() as Array<{ id: number; condition: string; priority: string }>;
    const open = alarms.find((a) => a.condition === 'open')!;
    expect(open.priority).toBe('trouble');
    const acked = await monitor.web.inject({ method: 'POST', url: `/api/v1/alarms/${open.id}/ack`, headers: auth, payload: { note: 'spade through the cable, splicing' } });
    expect(acked.statusCode).toBe(200);
    expect(acked.json()).toMatchObject({ state: 'acknowledged', ackedBy: 'token:night-script', note: 'spade through the cable, splicing' });
    // Without the token: refused.
    expect((await monitor.web.inject({ method: 'GET', url: '/api/v1/loops' })).statusCode).toBe(401);
  });
});
