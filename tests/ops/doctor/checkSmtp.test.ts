import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import type { MailConfig } from '../../../src/config/schema.js';
import { checkSmtp, verifyWithNodemailer, type SmtpVerifier } from '../../../src/ops/doctor/checkSmtp.js';
import { freePort } from '../../helpers/freePort.js';
import { startSmtpSink, type SmtpSink, type SmtpSinkOptions } from '../../helpers/smtpSink.js';
import { useTempDirs } from '../../helpers/tempDir.js';

const tempDir = useTempDirs();

/** Real SMTP servers on loopback (the shared smtp-server sink); doctor must never send a message. */
const servers: SmtpSink[] = [];

async function startServer(options: SmtpSinkOptions): Promise<SmtpSink> {
  const server = await startSmtpSink(options);
  servers.push(server);
  return server;
}

afterEach(async () => {
  await Promise.all(servers.splice(0).map((server) => server.close()));
});

function mail(port: number, smtp: Partial<NonNullable<MailConfig['smtp']>> = {}): MailConfig {
  return {
    from: 'pairwatch <monitor@example.org>',
    smtp: { host: '127.0.0.1', port, secure: false, require_tls: false, timeout: 5000, user: 'monitor', pass_env: 'PW_TEST_SMTP_PASS', ...smtp },
    group_window: 10_000,
    retry_first: 15_000,
    retry_max: 900_000,
    failing_after: 3,
  };
}

describe('checkSmtp against a real SMTP server on loopback', () => {
  it('connects and logs in without sending mail, and warns that the login went out without TLS', async () => {
    const server = await startServer({ user: 'monitor', pass: 's3cret' });
    const result = await checkSmtp(mail(server.port), { PW_TEST_SMTP_PASS: 's3cret' }, verifyWithNodemailer);
    // A plain-text AUTH exposes the password to anyone on the path (RFC 4954 §4 asks clients not to
    // send it unprotected); loopback is no excuse, a relay may forward it onwards.
    expect(result).toMatchObject({ name: 'smtp', status: 'warn' });
    expect(result.finding).toContain('logged in as monitor');
    expect(result.finding).toContain('without TLS');
    expect(result.finding).toContain('no mail sent');
    expect(server.messages.length).toBe(0);
  });

  it('does not warn about a login without TLS when no login is configured', async () => {
    const server = await startServer({});
    const result = await checkSmtp(mail(server.port, { user: undefined, pass_env: undefined }), {}, verifyWithNodemailer);
    expect(result).toMatchObject({ name: 'smtp', status: 'ok' });
  });

  it('fails a wrong password with a fix naming the settings', async () => {
    const server = await startServer({ user: 'monitor', pass: 's3cret' });
    const result = await checkSmtp(mail(server.port), { PW_TEST_SMTP_PASS: 'wrong' }, verifyWithNodemailer);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('refused the login for monitor');
    expect(result.fix).toContain('mail.smtp.user');
  });

  it('fails when nothing listens', async () => {
    // A port known to be closed: bound by us, then released.
    const port = await freePort();
    const result = await checkSmtp(mail(port), { PW_TEST_SMTP_PASS: 'x' }, verifyWithNodemailer);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain(`cannot connect to 127.0.0.1:${port}`);
    expect(result.fix).toContain('587');
  });

  it('refuses a STARTTLS certificate it cannot trust', async () => {
    const dir = tempDir('pw-smtp-tls-');
    execFileSync('openssl', ['req', '-x509', '-newkey', 'rsa:2048', '-nodes', '-keyout', join(dir, 'key.pem'), '-out', join(dir, 'cert.pem'), '-days', '1', '-subj', '/CN=localhost'], { stdio: 'ignore' });
    const certificate = { key: readFileSync(join(dir, 'key.pem')), cert: readFileSync(join(dir, 'cert.pem')) };
    const server = await startServer({ starttls: true, certificate, user: 'monitor', pass: 's3cret' });
    const result = await checkSmtp(mail(server.port), { PW_TEST_SMTP_PASS: 's3cret' }, verifyWithNodemailer);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('not trusted');
  });
});

describe('checkSmtp without a server', () => {
  const never: SmtpVerifier = async () => {
    throw new Error('must not be called');
  };

  it('warns and skips when there are no SMTP settings', async () => {
    const result = await checkSmtp({ ...mail(25), smtp: undefined }, {}, never);
    expect(result.status).toBe('warn');
    expect(result.finding).toMatch(/^skipped/);
  });

  it('fails when the password variable is not set', async () => {
    const result = await checkSmtp(mail(587), {}, never);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('PW_TEST_SMTP_PASS');
    expect(result.fix).toContain('/etc/pairwatch/env');
  });

  it('reports STARTTLS when the client log shows the upgrade', async () => {
    const upgraded: SmtpVerifier = async () => ({ log: ['Connection upgraded with STARTTLS'] });
    const result = await checkSmtp(mail(587, { host: 'smtp.example.org' }), { PW_TEST_SMTP_PASS: 'x' }, upgraded);
    expect(result).toMatchObject({ status: 'ok' });
    expect(result.finding).toContain('STARTTLS');
  });

  it('warns about a server far away that offers no encryption', async () => {
    const plain: SmtpVerifier = async () => ({ log: [] });
    const result = await checkSmtp(mail(587, { host: 'smtp.example.org' }), { PW_TEST_SMTP_PASS: 'x' }, plain);
    expect(result.status).toBe('warn');
    expect(result.finding).toContain('no encryption');
  });
});
