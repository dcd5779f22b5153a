import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';

/**
 * A real pseudo-terminal pair from socat: `a` for serialport (the "decoder port"), `b` for the test
 * to write into, as a decoder would. Resolves once both links exist.
 */
export async function startSocatPair(dir: string, timeoutMs = 10_000): Promise<{ a: string; b: string; process: ChildProcess; stop(): Promise<void> }> {
  const a = `${dir}/a`;
  const b = `${dir}/b`;
  const child = spawn('socat', ['-d', '-d', `pty,raw,echo=0,link=${a}`, `pty,raw,echo=0,link=${b}`], { stdio: ['ignore', 'ignore', 'pipe'] });
  let stderr = '';
  child.stderr!.on('data', (c: Buffer) => (stderr += c.toString()));
  await waitFor(() => stderr.includes('starting data transfer loop') && existsSync(a) && existsSync(b), timeoutMs, () => `socat did not start: ${stderr}`);
  return {
    a,
    b,
    process: child,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null || child.signalCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM');
      }),
  };
}

/** Polls a condition every 10 ms; the deadline only bounds a failure, it never decides a pass. */
export async function waitFor(check: () => boolean, timeoutMs: number, what: () => string = () => 'condition'): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what()}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}
