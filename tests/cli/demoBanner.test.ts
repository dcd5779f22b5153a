import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { freePort } from '../helpers/freePort.js';
import { stopChild } from '../helpers/stopChild.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';

const tempDir = useTempDirs();
const CLI = resolve('dist/src/cli/main.js');
const children: Array<ReturnType<typeof spawn>> = [];
afterAll(async () => {
  await Promise.all(children.map((c) => stopChild(c)));
});

describe.skipIf(!existsSync(CLI))('pairwatch demo (built CLI, as a new user runs it)', () => {
  it('prints the password banner last, after the start-up log lines, and never logs the password', async () => {
    const port = await freePort();
    const cwd = tempDir('pw-demo-banner-');
    const child = spawn(process.execPath, [CLI, 'demo', '--listen', `127.0.0.1:${port}`], { cwd, env: { ...process.env, PAIRWATCH_LOG_LEVEL: 'info' } });
    children.push(child);
    let screen = '';
    let logText = '';
    child.stdout.on('data', (d: Buffer) => (screen += d.toString()));
    child.stderr.on('data', (d: Buffer) => (screen += d.toString()));
    await waitFor(() => /password: {2}(\S+)/.test(screen), 30_000, () => `the banner; saw:\n${screen}`);
    const password = /password: {2}(\S+)/.exec(screen)![1]!;
    // Whatever the monitor logs after start-up arrives now; then stop it and read everything.
    await new Promise((r) => setTimeout(r, 500));
    await stopChild(child);
    const bannerStart = screen.indexOf('  pairwatch demo — ');
    const beforeBanner = screen.slice(0, bannerStart);
    logText = screen.slice(0, bannerStart) + screen.slice(screen.indexOf('Stop with Ctrl-C.'));
    // The start-up lines (the web server listening, the demo ready line) are above the banner.
    expect(beforeBanner).toMatch(/listening/i);
    expect(beforeBanner).toMatch(/demo ready/);
    // The password is on the screen once, in the banner, and in no log line.
    expect(screen.split(password).length - 1).toBe(1);
    expect(logText).not.toContain(password);
    expect(screen).toContain(`Sign in as:  demo`);
  }, 60_000);
});
