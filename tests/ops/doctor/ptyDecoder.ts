import { spawn, type ChildProcess } from 'node:child_process';
import { closeSync, existsSync, openSync, writeSync } from 'node:fs';
import { join } from 'node:path';

/**
 * A pseudo-terminal pair made by socat: the monitor side (`port`) is opened by the code under test
 * through serialport; the test writes decoder lines into the other side (`feed`).
 */
export interface PtyPair {
  port: string;
  write(text: string): void;
  close(): Promise<void>;
}

export async function openPtyPair(dir: string): Promise<PtyPair> {
  const port = join(dir, 'decoder');
  const feed = join(dir, 'feed');
  const socat: ChildProcess = spawn('socat', [`pty,raw,echo=0,link=${port}`, `pty,raw,echo=0,link=${feed}`], { stdio: 'ignore' });
  // Wait for socat to make its links: a readiness condition, bounded, not a timing assumption.
  for (let i = 0; i < 200 && !(existsSync(port) && existsSync(feed)); i++) await new Promise((r) => setTimeout(r, 25));
  if (!existsSync(port) || !existsSync(feed)) {
    socat.kill();
    throw new Error('socat did not create the pseudo-terminal pair');
  }
  let fd: number | null = openSync(feed, 'w');
  return {
    port,
    write: (text) => {
      if (fd !== null) writeSync(fd, Buffer.from(text, 'latin1'));
    },
    close: async () => {
      if (fd !== null) closeSync(fd);
      fd = null;
      const exited = new Promise((resolve) => socat.once('exit', resolve));
      socat.kill();
      await exited;
    },
  };
}
