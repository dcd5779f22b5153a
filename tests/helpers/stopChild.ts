import type { ChildProcess } from 'node:child_process';

/** Sends `signal` unless the child has already gone (or never started), and resolves once it has exited. */
export function stopChild(child: ChildProcess, signal: NodeJS.Signals = 'SIGTERM'): Promise<void> {
  return new Promise<void>((resolve) => {
    if (child.pid === undefined || child.exitCode !== null || child.signalCode !== null) return resolve();
    child.once('exit', () => resolve());
    child.kill(signal);
  });
}
