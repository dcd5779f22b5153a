import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { checkImap } from '../../src/ops/doctor/checkImap.js';
import { startDovecot, type DovecotServer } from '../helpers/dovecot.js';
import { freePort } from '../helpers/freePort.js';

/** `pairwatch doctor`'s IMAP check against a real Dovecot on 127.0.0.1. */
let dovecot: DovecotServer;
beforeAll(async () => {
  dovecot = await startDovecot({ user: 'alarms@hollins.test', pass: 'app-pass-9' });
}, 30_000);
afterAll(async () => dovecot?.close());

const mailWith = (imap: string) =>
  parseConfig(`site: { name: "Hollins Mead", timezone: "Europe/London" }
decoders: [{ id: main, port: /dev/ttyUSB0 }]
loops: [{ id: shed, name: "Shed", decoder: main, input: 1 }]
contacts: [{ id: office, name: "Office", email: "office@hollins.test" }]
escalation: { default: { steps: [{ after: 0s, notify: [office] }] } }
mail:
  drop_folder: /tmp/x
  imap: { ${imap} }
storage: { path: /tmp/never-opened.db }
`).mail;

describe('doctor: reply inbox check', () => {
  it('logs in and finds the folder', async () => {
    const r = await checkImap(mailWith(`host: 127.0.0.1, port: ${dovecot.port}, secure: false, user: alarms@hollins.test, pass_env: PW_I`), { PW_I: 'app-pass-9' });
    expect(r.status).toBe('ok');
    expect(r.finding).toMatch(/logged in to 127\.0\.0\.1:\d+ as alarms@hollins\.test \(no encryption\); INBOX \(0 messages, 0 unread\); IDLE offered/);
  });

  it('a refused login fails, naming the user and pointing at the app password', async () => {
    const r = await checkImap(mailWith(`host: 127.0.0.1, port: ${dovecot.port}, secure: false, user: alarms@hollins.test, pass_env: PW_I`), { PW_I: 'wrong' });
    expect(r).toMatchObject({ status: 'fail', finding: expect.stringContaining('refused the login for alarms@hollins.test'), fix: expect.stringContaining('app password') });
  });

  it('a folder that does not exist fails', async () => {
    const r = await checkImap(mailWith(`host: 127.0.0.1, port: ${dovecot.port}, secure: false, user: alarms@hollins.test, pass_env: PW_I, folder: Alarms`), { PW_I: 'app-pass-9' });
    expect(r).toMatchObject({ status: 'fail', finding: expect.stringContaining('there is no folder Alarms') });
  });

  it('an unreachable server fails; the password variable missing fails before any connection', async () => {
    const port = await freePort();
    expect((await checkImap(mailWith(`host: 127.0.0.1, port: ${port}, secure: false, user: a@b.test, pass_env: PW_I`), { PW_I: 'x' })).finding).toMatch(/^cannot reach 127\.0\.0\.1:\d+/);
    expect((await checkImap(mailWith(`host: 127.0.0.1, port: ${port}, user: a@b.test, pass_env: PW_I`), {})).finding).toContain('PW_I (mail.imap.pass_env) is not set');
  });

  it('the defaults are IMAP over TLS on 993 (RFC 8314 §3.3) and INBOX', () => {
    expect(mailWith('host: imap.example.org, user: a@b.test, pass_env: PW_I').imap).toMatchObject({ port: 993, secure: true, folder: 'INBOX', require_dkim: false, reply_tag: false });
  });
});
