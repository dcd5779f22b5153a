import { spawn } from 'node:child_process';
import { closeSync, existsSync, openSync, writeSync, constants as fsConstants } from 'node:fs';
import { BenchError } from './benchError.js';

/**
 * A real pseudo-terminal pair from socat: `devicePath` is what the monitor opens through serialport,
 * as it would a USB decoder; the bench writes protocol lines into the other end.
 */
export interface PtyPair {
  devicePath: string;
  write(text: string): void;
  close(): Promise<void>;
}

export async function openPtyPair(dir: string, timeoutMs = 10_000): Promise<PtyPair> {
  const devicePath = `${dir}/decoder`;
  const benchEnd = `${dir}/bench-end`;
  const child = spawn('socat', ['-d', '-d', `pty,raw,echo=0,link=${devicePath}`, `pty,raw,echo=0,link=${benchEnd}`], { stdio: ['ignore', 'ignore', 'pipe'] });
  let stderr = '';
  let spawnError: Error | null = null;
  child.on('error', (err) => (spawnError = err));
  child.stderr!.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  const deadline = Date.now() + timeoutMs;
  while (!(stderr.includes('starting data transfer loop') && existsSync(devicePath) && existsSync(benchEnd))) {
    if (spawnError !== null) throw new BenchError('PW_BENCH_NO_SOCAT', `cannot start socat (is it installed?): ${(spawnError as Error).message}`);
    if (Date.now() > deadline || child.exitCode !== null) throw new BenchError('PW_BENCH_NO_SOCAT', `socat did not set up the pseudo-terminals: ${stderr.trim()}`);
    await new Promise((r) => setTimeout(r, 10));
  }
  // Kept open for the whole run; O_NOCTTY so the pty never becomes this process's terminal.
  const fd = openSync(benchEnd, fsConstants.O_WRONLY | fsConstants.O_NOCTTY);
  return {
    devicePath,
    write(text) {
      writeSync(fd, text);
    },
    close: () =>
      new Promise<void>((resolve) => {
        closeSync(fd);
        if (child.exitCode !== null || child.signalCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM');
      }),
  };
}
