import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { stopChild } from './stopChild.js';
import { waitFor } from './waitFor.js';

/**
 * A real pseudo-terminal pair from socat: `a` for serialport (the "decoder port"), `b` for the test
 * to write into, as a decoder would.
 */
export interface SocatPair {
  readonly a: string;
  readonly b: string;
  readonly process: ChildProcess;
  /** Ends socat and resolves once it has exited; SIGKILL is a cable yanked, no goodbye on either side. */
  stop(signal?: NodeJS.Signals): Promise<void>;
}

/**
 * Starts socat with its two links in `where` (named `a` and `b`), or at the two paths given; starting
 * it again on the same paths is plugging the decoder back in. Resolves once socat says it is
 * transferring and both links exist; fails at once if socat exits first, and leaves no socat behind
 * when it fails.
 */
export async function startSocatPair(where: string | { a: string; b: string }, timeoutMs = 10_000): Promise<SocatPair> {
  const { a, b } = typeof where === 'string' ? { a: join(where, 'a'), b: join(where, 'b') } : where;
  const child = spawn('socat', ['-d', '-d', `pty,raw,echo=0,link=${a}`, `pty,raw,echo=0,link=${b}`], { stdio: ['ignore', 'ignore', 'pipe'] });
  let stderr = '';
  child.stderr!.on('data', (c: Buffer) => (stderr += c.toString()));
  child.once('error', (err) => (stderr += `${err.message}\n`)); // socat missing: fail the wait, not the process
  const started = () => {
    if (child.exitCode !== null || child.signalCode !== null || child.pid === undefined) throw new Error(`socat did not start: ${stderr}`);
    return stderr.includes('starting data transfer loop') && existsSync(a) && existsSync(b);
  };
  try {
    await waitFor(started, timeoutMs, () => `socat to start: ${stderr}`);
  } catch (err) {
    await stopChild(child, 'SIGKILL'); // a half-started socat must not outlive the failed test
    throw err;
  }
  return { a, b, process: child, stop: (signal = 'SIGTERM') => stopChild(child, signal) };
}
