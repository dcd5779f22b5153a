import { closeSync, openSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { startSocatPair } from '../../helpers/socatPair.js';

/**
 * The shared socat pseudo-terminal pair, with the test holding the decoder's end open: the monitor
 * side (`port`) is opened by the code under test through serialport; the test writes decoder lines
 * into the other side.
 */
export interface PtyPair {
  port: string;
  write(text: string): void;
  close(): Promise<void>;
}

export async function openPtyPair(dir: string): Promise<PtyPair> {
  const pair = await startSocatPair({ a: join(dir, 'decoder'), b: join(dir, 'feed') });
  let fd: number | null = openSync(pair.b, 'w');
  return {
    port: pair.a,
    write: (text) => {
      if (fd !== null) writeSync(fd, Buffer.from(text, 'latin1'));
    },
    close: async () => {
      if (fd !== null) closeSync(fd);
      fd = null;
      await pair.stop();
    },
  };
}
