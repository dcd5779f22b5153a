import { afterEach, describe, expect, it } from 'vitest';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { simpleParser } from 'mailparser';
import { mailTestCommand } from '../../src/cli/mailTestCommand.js';
import { captureCliIo } from '../helpers/captureCliIo.js';
import { freePort } from '../helpers/freePort.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { useTempDirs } from '../helpers/tempDir.js';


function writeConfig(dir: string, mail: string): string {
  const file = join(dir, 'site.yaml');
  writeFileSync(
    file,
    `site: { name: "Ridgeway Farm", timezone: Europe/London }
decoders:
  - { id: main, port: /dev/ttyUSB0 }
loops:
  - { id: well, name: "Well pit", decoder: main, input: 1 }
storage: { path: ${JSON.stringify(join(dir, 'data', 'site.db'))} }
${mail}
`,
  );
  return file;
}

const tempDir = useTempDirs('each');
let sink: SmtpSink | undefined;
afterEach(async () => {
  await sink?.close();
  sink = undefined;
});

describe('pairwatch mail-test', () => {
  it('sends a test message through SMTP and prints the server reply', async () => {
    const dir = tempDir('pw-mailtest-');
    sink = await startSmtpSink();
    const config = writeConfig(
      dir,
      `mail:
  from: "pairwatch <monitor@ridgeway.example>"
  smtp: { host: 127.0.0.1, port: ${sink.port}, user: monitor, pass_env: PW_TEST_PASS }`,
    );
    const run = captureCliIo({ env: { PW_TEST_PASS: 's3cret-pass' } });
    const code = await mailTestCommand(['ann@ridgeway.example', '--config', config, '--verbose'], run.io);
    expect(run.err()).toBe('');
    expect(code).toBe(0);
    expect(run.out()).toMatch(/accepted for ann@ridgeway\.example; the server answered: 250 /);
    expect(run.out()).toMatch(/\| .*EHLO/); // --verbose shows the conversation
    expect(run.out()).not.toContain('s3cret-pass');
    expect(sink.messages).toHaveLength(1);
    expect(sink.messages[0]!.subject).toBe('[TEST] Ridgeway Farm: test message from pairwatch');
    expect(sink.messages[0]!.headers.get('auto-submitted')).toBe('auto-generated');
  });

  it('without SMTP settings writes an .eml into the data folder and prints its path', async () => {
    const dir = tempDir('pw-mailtest-');
    const config = writeConfig(dir, '');
    const run = captureCliIo();
    expect(await mailTestCommand(['ann@ridgeway.example', '--config', config], run.io)).toBe(0);
    const path = /written to (\S+\.eml)/.exec(run.out())?.[1];
    expect(path?.startsWith(join(dir, 'data', 'outbox-mail'))).toBe(true);
    expect(existsSync(path!)).toBe(true);
    const mail = await simpleParser(readFileSync(path!));
    expect(mail.to && 'value' in mail.to ? mail.to.value[0]?.address : null).toBe('ann@ridgeway.example');
  });

  it('a server that is down fails with exit 1 and one plain line, no stack trace', async () => {
    const dir = tempDir('pw-mailtest-');
    const port = await freePort();
    const config = writeConfig(dir, `mail:\n  from: "pairwatch <monitor@ridgeway.example>"\n  smtp: { host: 127.0.0.1, port: ${port}, timeout: 5s }`);
    const run = captureCliIo();
    expect(await mailTestCommand(['ann@ridgeway.example', '--config', config], run.io)).toBe(1);
    expect(run.err()).toBe(`mail-test failed (PW_MAIL_SEND_FAILED): cannot connect to 127.0.0.1:${port} (connection refused)\n`);
  });

  it('a bad config prints each problem with its path and exits 2', async () => {
    const dir = tempDir('pw-mailtest-');
    const config = writeConfig(dir, 'mail:\n  from: "x <a@b.example>"\n  smtp: { host: 127.0.0.1, prot: 25 }');
    const run = captureCliIo();
    expect(await mailTestCommand(['ann@ridgeway.example', '--config', config], run.io)).toBe(2);
    expect(run.err()).toContain('mail.smtp.prot: unknown key');
    expect(run.err()).not.toMatch(/\n\s+at /);
  });

  it('an unset pass_env variable is named, exit 2', async () => {
    const dir = tempDir('pw-mailtest-');
    const config = writeConfig(dir, 'mail:\n  from: "x <a@b.example>"\n  smtp: { host: 127.0.0.1, user: u, pass_env: PW_MISSING }');
    const run = captureCliIo();
    expect(await mailTestCommand(['ann@ridgeway.example', '--config', config], run.io)).toBe(2);
    expect(run.err()).toBe('PW_MAIL_PASS_MISSING: mail.smtp.pass_env: the environment variable PW_MISSING is not set\n');
  });

  it.each([[[]], [['not-an-address']], [['a@b.example', 'extra']], [['--nope']]])('bad usage %j exits 2 with the usage line', async (argv) => {
    const run = captureCliIo();
    expect(await mailTestCommand(argv, run.io)).toBe(2);
    expect(run.err()).toMatch(/mail-test/);
  });
});
