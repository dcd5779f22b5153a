import { execFile } from 'node:child_process';
import { request } from 'node:http';
import { connect, type Socket } from 'node:net';
import { mkdirSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { promisify } from 'node:util';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openStore } from '../../src/store/openStore.js';
import { insertUser } from '../../src/store/accountRepos.js';
import { hashPassword } from '../../src/web/auth/passwordHash.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { apiClient, pollUntil, seedApiToken, type ApiClient } from './fixtures/apiClient.js';
import { killAllDaemons, spawnDaemon, type DaemonProcess } from './fixtures/daemonProcess.js';
import { privateBuild } from './fixtures/privateBuild.js';
import { feedPty, killAllSocat, startSocat, type PluggedPort, type PtyFeeder } from './fixtures/ptyDecoder.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';
import { calmScenario } from './fixtures/stormScenario.js';

/**
 * The outside review of issue 9 rerun black-box against the real daemon — `pairwatch run` as a child
 * process started the way a tight service would be (umask 022, open-file limit 256 via prlimit), with a
 * socat pseudo-terminal decoder and a real SMTP server on loopback. Only HTTP, SMTP and the files on
 * disk are looked at.
 */
const LOOPS = 2;
const TOKEN = `pwt_${'s'.repeat(43)}`;
const USER = { name: 'meg', password: 'meg-long-hay-fork' };
const FILE_LIMIT = 256;
const HALF_SENT = 300;

let tmp: TempDir;
let sink: SmtpSink;
let socat: PluggedPort | null = null;
let feeder: PtyFeeder | null = null;
let daemon: DaemonProcess;
let base: string;
let api: ApiClient;
let dbPath: string;
let port: number;
const held: Socket[] = [];

/** A raw HTTP exchange, so Host and odd bytes go out exactly as written. */
function raw(path: string, options: { method?: string; headers?: Record<string, string>; body?: string } = {}): Promise<{ status: number; headers: Record<string, string | string[] | undefined>; body: string }> {
  return new Promise((resolve, reject) => {
    const req = request({ host: '127.0.0.1', port, path, method: options.method ?? 'GET', headers: options.headers, timeout: 5000 }, (res) => {
      let body = '';
      res.setEncoding('utf8');
      res.on('data', (c: string) => (body += c));
      res.on('end', () => resolve({ status: res.statusCode!, headers: res.headers, body }));
    });
    req.on('error', reject);
    req.end(options.body);
  });
}

async function loginForm(): Promise<{ cookie: string; csrf: string }> {
  const form = await raw('/login');
  const cookie = String((form.headers['set-cookie'] as string[]).find((c) => c.startsWith('pw_login='))).split(';')[0]!;
  return { cookie, csrf: /name="csrf" value="([^"]*)"/.exec(form.body)![1]! };
}

async function signIn(password: string, next = '/'): Promise<{ status: number; location: string | undefined }> {
  const form = await loginForm();
  const res = await raw('/login', {
    method: 'POST',
    headers: { cookie: form.cookie, 'content-type': 'application/x-www-form-urlencoded' },
    body: new URLSearchParams({ csrf: form.csrf, name: USER.name, password, next }).toString(),
  });
  return { status: res.status, location: res.headers.location as string | undefined };
}

beforeAll(async () => {
  privateBuild();
  tmp = makeTempDir('pw-faults-websec-');
  mkdirSync(join(tmp.dir, 'dev'));
  const portPath = join(tmp.dir, 'dev', 'decoder');
  const feedPath = join(tmp.dir, 'dev', 'feed');
  dbPath = join(tmp.dir, 'data', 'brackenfold.db');
  seedApiToken(dbPath, TOKEN);
  const store = openStore({ path: dbPath });
  const { hash, salt } = await hashPassword(USER.password, { log2N: 10, r: 8, p: 1 });
  insertUser(store.db, { name: USER.name, role: 'operator', passwordHash: hash, passwordSalt: salt, createdAt: Date.now() });
  store.close();
  sink = await startSmtpSink({ auth: false });
  const configFile = join(tmp.dir, 'site.yaml');
  writeFileSync(configFile, faultSiteYaml({ port: portPath, loops: LOOPS, dbPath, listen: '127.0.0.1:0', smtpPort: sink.port, groupWindow: '1s', silence: '2s' }));
  socat = await startSocat(portPath, feedPath);
  feeder = feedPty(feedPath, calmScenario({ loops: LOOPS, seed: 5 }));
  daemon = spawnDaemon(configFile, {}, `umask 022; exec prlimit --nofile=${FILE_LIMIT}:${FILE_LIMIT} --`);
  base = await daemon.waitForAddress(20_000);
  port = Number(new URL(base).port);
  api = apiClient(base, TOKEN);
  await pollUntil(async () => (await api.get<Array<{ state: string }>>('/api/v1/loops')).every((l) => l.state === 'healthy'), 20_000, 'every loop healthy');
}, 60_000);

afterAll(async () => {
  for (const s of held.splice(0)) s.destroy();
  feeder?.stop();
  await killAllDaemons();
  await killAllSocat();
  await sink?.close();
  tmp?.cleanup();
});

describe('pairwatch run, attacked from outside (issue 9)', () => {
  it('files are owner-only under umask 022: data folder, database, -wal, -shm, and `pairwatch backup` output', async () => {
    const mode = (p: string) => statSync(p).mode & 0o777;
    expect(mode(join(tmp.dir, 'data'))).toBe(0o700);
    for (const suffix of ['', '-wal', '-shm']) expect(mode(`${dbPath}${suffix}`), `database${suffix}`).toBe(0o600);
    const out = join(tmp.dir, 'copies', 'tonight.db');
    const cli = privateBuild().cli;
    await promisify(execFile)('/bin/sh', ['-c', `umask 022; exec '${process.execPath}' '${cli}' backup '${out}' --config '${join(tmp.dir, 'site.yaml')}'`]);
    expect(mode(out)).toBe(0o600);
    expect(mode(join(tmp.dir, 'copies'))).toBe(0o700);
  });

  it('a foreign Host (DNS rebinding) gets 421 everywhere; the configured and loopback names work', async () => {
    for (const path of ['/', '/login', '/metrics', '/api/v1/loops', '/healthz']) {
      const res = await raw(path, { headers: { host: `rebind.attacker.example:${port}`, authorization: `Bearer ${TOKEN}` } });
      expect(res.status, path).toBe(421);
      expect(res.body).not.toContain('Brackenfold');
    }
    for (const host of [`127.0.0.1:${port}`, `localhost:${port}`]) {
      expect((await raw('/api/v1/loops', { headers: { host, authorization: `Bearer ${TOKEN}` } })).status, host).toBe(200);
    }
    // /metrics answers this loopback client without a token (web.metrics_token unset).
    expect((await raw('/metrics')).status).toBe(200);
  });

  it('next= after sign-in never leaves the server and never answers 5xx, for crafted and random inputs', async () => {
    const PIECES = ['/', '\\', '\t', '\n', '\u0000', '\u007f', '\u2028', '%09', '%5C', 'evil.example', 'https:', '@', '.', 'alarms'];
    const next = fc.oneof(fc.array(fc.constantFrom(...PIECES), { maxLength: 6 }).map((p) => p.join('')), fc.string({ maxLength: 20 }));
    for (const fixed of ['/\t/evil.example/x', '/\t\\evil.example', '/\u007f', '/\u0000', '/\u2028']) {
      const res = await signIn(USER.password, fixed);
      expect(res.status).toBe(303);
      expect(res.location).toBe('/');
    }
    await fc.assert(
      fc.asyncProperty(next, async (n) => {
        const res = await signIn(USER.password, n);
        expect(res.status).toBe(303);
        expect(new URL(res.location!, base).origin).toBe(new URL(base).origin);
      }),
      { numRuns: 40 },
    );
  });

  it('control characters in notes are refused with a 400 naming the field, never stored, never a 5xx', async () => {
    const alarms = await api.get<Array<{ id: number }>>('/api/v1/alarms?status=all');
    const id = alarms[0]?.id ?? 1;
    await fc.assert(
      fc.asyncProperty(fc.constantFrom('\u0000', '\u0007', '\u001b', '\u007f', '\u0085', '\u202e', '\u2066', '\ud800'), fc.string({ maxLength: 8 }), async (bad, around) => {
        const res = await api.post<{ error: { field: string } }>(`/api/v1/alarms/${id}/ack`, { note: `${around}${bad}${around}` });
        expect(res.status).toBe(400);
        expect(res.body.error.field).toBe('note');
      }),
      { numRuns: 30 },
    );
  });

  it('40 parallel wrong passwords for one name from one address: at most the limit (5) are checked', async () => {
    const forms = await Promise.all(Array.from({ length: 40 }, () => loginForm()));
    const answers = await Promise.all(
      forms.map((form, i) =>
        raw('/login', {
          method: 'POST',
          headers: { cookie: form.cookie, 'content-type': 'application/x-www-form-urlencoded' },
          body: new URLSearchParams({ csrf: form.csrf, name: USER.name, password: `guess-${i}-wrong`, next: '/' }).toString(),
        }),
      ),
    );
    const codes = answers.map((a) => a.status);
    expect(codes.filter((c) => c === 401).length).toBeLessThanOrEqual(5);
    expect(codes.filter((c) => c !== 401 && c !== 429)).toEqual([]);
    // The log never holds a typed name on a failed sign-in.
    expect(daemon.logs.filter((e) => e.msg === 'sign-in failed' && 'name' in e)).toEqual([]);
  });

  it(`${HALF_SENT} half-sent requests at an open-file limit of ${FILE_LIMIT}: the web side saturates, alarm mail still goes out`, async () => {
    const mailsBefore = sink.messages.length;
    await Promise.all(
      Array.from(
        { length: HALF_SENT },
        () =>
          new Promise<void>((resolve) => {
            const socket = connect(port, '127.0.0.1');
            held.push(socket);
            socket.on('error', () => resolve());
            socket.on('close', () => resolve());
            socket.on('connect', () => {
              socket.write(`POST /login HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: 4096\r\n\r\nname=`, () => resolve());
            });
          }),
      ),
    );
    // The decoder's cable is pulled: an offline alarm, mailed to the office.
    await socat!.unplug();
    const mail = await pollUntil(
      async () => sink.messages.slice(mailsBefore).find((m) => /offline/i.test(m.subject ?? '') || /offline/i.test(m.text ?? '')),
      30_000,
      'the offline alarm mail at the SMTP sink',
      100,
    );
    expect(mail.to).toBeDefined();
    expect(daemon.isRunning()).toBe(true);
    expect(daemon.logs.filter((e) => /EMFILE/.test(JSON.stringify(e)))).toEqual([]);
    expect(daemon.stderr()).not.toMatch(/EMFILE/);
    for (const s of held.splice(0)) s.destroy();
    // Once the flood ends, the web side answers again.
    await pollUntil(async () => (await raw('/healthz')).status > 0, 30_000, 'the web port answering again', 100);
  }, 60_000);
});
