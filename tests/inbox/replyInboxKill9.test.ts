import Database from 'better-sqlite3';
import { mkdirSync } from 'node:fs';
import { createServer, connect, type Server, type Socket } from 'node:net';
import type { AddressInfo } from 'node:net';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { killAllDaemons, spawnDaemon, type DaemonProcess } from '../faults/fixtures/daemonProcess.js';
import { privateBuild } from '../faults/fixtures/privateBuild.js';
import { startDovecot, type DovecotServer } from '../helpers/dovecot.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { openMailbox, replyTo, waitUntil, type RawMail, type TestMailbox } from './fixtures/replyMail.js';
import { IMAP_PASS, IMAP_USER, OFFICE, SHEPHERD, imapEnv, sentTo, tokenOf, writeReplySite } from './fixtures/replySite.js';

/**
 * Power cut while a reply is being handled: the real daemon (a child process, as a user runs it) is
 * killed with SIGKILL at two exact points, picked by a loopback proxy that sits between it and the real
 * Dovecot and reads the IMAP conversation:
 *  - the moment the server hands over the fetched reply (the daemon never sees it: nothing committed);
 *  - the moment the daemon, having committed the acknowledgement, asks the server to mark the reply
 *    (committed, mailbox not yet marked).
 * After each restart the reply must be handled exactly once: never missed, never twice.
 */
const HUNG = 20_000;

let tmp: TempDir;
let dovecot: DovecotServer;
let smtp: SmtpSink;
let mailbox: TestMailbox;
let proxy: Server;
let proxyPort: number;
let configFile: string;
let dbPath: string;
let daemon: DaemonProcess | null = null;

/** What to kill the daemon on; null forwards everything. */
let killOn: { direction: 'server' | 'client'; pattern: RegExp } | null = null;
let kills = 0;

beforeAll(async () => {
  privateBuild();
  tmp = makeTempDir('pw-reply-kill9-');
  mkdirSync(join(tmp.dir, 'data'));
  dbPath = join(tmp.dir, 'data', 'hollins.db');
  dovecot = await startDovecot({ user: IMAP_USER, pass: IMAP_PASS });
  smtp = await startSmtpSink({ auth: false });
  proxy = createServer((client: Socket) => {
    const server = connect(dovecot.port, '127.0.0.1');
    const cut = () => {
      client.destroy();
      server.destroy();
    };
    const relay = (from: Socket, to: Socket, direction: 'server' | 'client') =>
      from.on('data', (chunk: Buffer) => {
        if (killOn && killOn.direction === direction && killOn.pattern.test(chunk.toString('latin1'))) {
          killOn = null;
          kills += 1;
          daemon?.child.kill('SIGKILL'); // before the bytes go on: the daemon dies at exactly this point
          cut();
          return;
        }
        to.write(chunk);
      });
    relay(client, server, 'client');
    relay(server, client, 'server');
    client.on('error', cut);
    server.on('error', cut);
    client.on('close', cut);
    server.on('close', cut);
  });
  await new Promise<void>((resolve) => proxy.listen(0, '127.0.0.1', () => resolve()));
  proxyPort = (proxy.address() as AddressInfo).port;
  configFile = writeReplySite({ dir: tmp.dir, imapPort: proxyPort, smtpPort: smtp.port, freezeInput1At: '1s' });
  mailbox = await openMailbox(dovecot);
}, 90_000);

afterAll(async () => {
  await killAllDaemons();
  await mailbox?.close();
  await new Promise<void>((resolve) => (proxy ? proxy.close(() => resolve()) : resolve()));
  await smtp?.close();
  await dovecot?.close();
  tmp?.cleanup();
});

function committed<T>(sql: string): T {
  const db = new Database(dbPath, { readonly: true });
  try {
    return db.prepare(sql).get() as T;
  } finally {
    db.close();
  }
}
const count = (sql: string) => committed<{ n: number }>(sql).n;

async function startDaemon(): Promise<DaemonProcess> {
  const d = spawnDaemon(configFile, imapEnv());
  await d.waitForLog((e) => e.msg.startsWith('reply inbox: watching'), HUNG, 'the reply inbox to open');
  return d;
}

async function flagsOf(mail: RawMail): Promise<Set<string>> {
  return (await mailbox.list()).find((e) => e.messageId === mail.messageId)?.flags ?? new Set();
}

describe('kill -9 while a reply is handled (real daemon, real Dovecot)', () => {
  const alarmMail = (address: string) => smtp.messages.find((m) => sentTo(m).includes(address) && tokenOf(m) !== '' && (m.subject ?? '').includes('Lambing shed'));

  beforeAll(async () => {
    daemon = await startDaemon();
    // The simulated node on the lambing shed stops its heartbeat at 1 s: a real trip, a real alarm mail.
    await waitUntil(() => !!alarmMail(OFFICE.email) && !!alarmMail(SHEPHERD.email), HUNG, () => 'the alarm mail to both contacts');
  }, 60_000);

  it('killed as the server hands over the reply: after the restart it is read and acknowledges, once', async () => {
    const reply = replyTo(alarmMail(OFFICE.email)!, { from: OFFICE.email, words: 'OK, on my way' });
    killOn = { direction: 'server', pattern: new RegExp(reply.messageId.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')) };
    const dead = daemon!.exited;
    await mailbox.append(reply);
    await dead;
    expect(kills).toBe(1);
    expect(count("SELECT count(*) AS n FROM audit WHERE action = 'acknowledge'")).toBe(0);

    daemon = await startDaemon();
    await waitUntil(async () => (await flagsOf(reply)).has('\\Seen'), HUNG, () => 'the reply to be handled after the restart');
    expect(count("SELECT count(*) AS n FROM audit WHERE action = 'acknowledge'")).toBe(1);
    expect(count("SELECT count(*) AS n FROM outbox WHERE kind = 'reply-confirmation'")).toBe(1);
  }, 60_000);

  it('killed after the commit, before the mailbox is marked: the restart marks it and handles nothing twice', async () => {
    const reply = replyTo(alarmMail(SHEPHERD.email)!, { from: SHEPHERD.email, words: 'ack' });
    killOn = { direction: 'client', pattern: /UID STORE \d+ \+FLAGS/ };
    const dead = daemon!.exited;
    await mailbox.append(reply);
    await dead;
    expect(kills).toBe(2);
    // Committed before the kill: the spent token, the verdict and the confirmation, in one transaction.
    expect(count("SELECT count(*) AS n FROM outbox WHERE kind = 'reply-confirmation'")).toBe(2);
    expect((await flagsOf(reply)).has('\\Seen')).toBe(false);

    daemon = await startDaemon();
    await waitUntil(async () => (await flagsOf(reply)).has('\\Seen'), HUNG, () => 'the reply to be marked after the restart');
    // A later message is read only after the earlier ones (UID order): once it is flagged, the daemon is past the reply.
    const probe = replyTo(alarmMail(OFFICE.email)!, { from: OFFICE.email, words: 'OK', headers: { 'List-Id': '<hands.hollins.test>' } });
    await mailbox.append(probe);
    await waitUntil(async () => (await flagsOf(probe)).has('\\Flagged'), HUNG, () => 'the probe to be flagged');
    expect(count("SELECT count(*) AS n FROM outbox WHERE kind = 'reply-confirmation'")).toBe(2);
    expect(count("SELECT count(*) AS n FROM audit WHERE action = 'acknowledge'")).toBe(1);
    expect(count("SELECT count(*) AS n FROM audit WHERE action = 'mail-reply'")).toBe(2);
  }, 60_000);
});
