import { closeSync, openSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { createDecoderLink } from '../../src/ingest/createDecoderLink.js';
import type { DecoderLink, LinkStatus } from '../../src/ingest/linkTypes.js';
import { refLine } from '../protocol/referenceLine.js';
import { startSocatPair } from '../helpers/socatPair.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';

// Before the link cleanups: after-hooks run in reverse, so the folders go once the links are closed.
const tempDir = useTempDirs('each');
const cleanups: Array<() => Promise<void> | void> = [];
afterEach(async () => {
  for (const fn of cleanups.splice(0).reverse()) await fn();
});

function watch(port: string): { link: DecoderLink; lines: string[]; statuses: LinkStatus[] } {
  const lines: string[] = [];
  const statuses: LinkStatus[] = [];
  const link = createDecoderLink({ port, baud: 115200, reconnectMs: 100, onLine: (l) => lines.push(l), onStatus: (s) => statuses.push(s) });
  cleanups.push(() => link.close());
  return { link, lines, statuses };
}

function writeInto(path: string, text: string): void {
  const fd = openSync(path, 'w');
  try {
    writeSync(fd, text);
  } finally {
    closeSync(fd);
  }
}

const last = (statuses: LinkStatus[]) => statuses.at(-1)?.state;

describe('decoder link over a real pseudo-terminal (socat) through serialport', () => {
  it('delivers lines written into the other end, joined across writes', async () => {
    const dir = tempDir('pw-serial-');
    const pair = await startSocatPair(dir);
    cleanups.push(() => pair.stop());
    const w = watch(pair.a);
    await waitFor(() => last(w.statuses) === 'connected', 10_000, () => `connected, got ${JSON.stringify(w.statuses)}`);
    expect(w.statuses[0]).toEqual({ state: 'connecting' });

    const hello = refLine('HELLO 1 8 bench-fw');
    const tick = refLine('TICK 0 200000 NNNNNNOO');
    writeInto(pair.b, `${hello}\r\n${tick.slice(0, 9)}`);
    writeInto(pair.b, `${tick.slice(9)}\n`);
    await waitFor(() => w.lines.length >= 2, 10_000, () => `2 lines, got ${JSON.stringify(w.lines)}`);
    expect(w.lines).toEqual([`${hello}\r`, tick]);
  });

  it('reports disconnected when the port goes away, and connects again when it comes back', async () => {
    const dir = tempDir('pw-serial-');
    const first = await startSocatPair(dir);
    const w = watch(first.a);
    await waitFor(() => last(w.statuses) === 'connected', 10_000);

    await first.stop();
    await waitFor(() => last(w.statuses) === 'disconnected', 10_000, () => `disconnected, got ${JSON.stringify(w.statuses)}`);
    const down = w.statuses.at(-1)!;
    expect(down.reason).toMatch(/disconnected|removed|does not exist|stopped responding/);

    // While it is away the link keeps retrying (every 100 ms here: the reconnect below is only reached
    // by retrying) without repeating the same status. Driven by events, not by a fixed sleep.
    const second = await startSocatPair(dir);
    cleanups.push(() => second.stop());
    await waitFor(() => last(w.statuses) === 'connected', 10_000, () => `reconnected, got ${JSON.stringify(w.statuses)}`);
    const whileAway = w.statuses.slice(w.statuses.indexOf(down), -1);
    expect(whileAway.every((s) => s.state === 'disconnected')).toBe(true);
    expect(new Set(whileAway.map((s) => s.reason)).size).toBe(whileAway.length);
    for (let i = 1; i < w.statuses.length; i++) {
      expect([w.statuses[i]!.state, w.statuses[i]!.reason]).not.toEqual([w.statuses[i - 1]!.state, w.statuses[i - 1]!.reason]);
    }
    const line = refLine('TICK 1 400000 NNNNNNOO');
    writeInto(second.b, `${line}\n`);
    await waitFor(() => w.lines.includes(line), 10_000);
  });

  it('a device that does not exist is a plain disconnected reason, not a throw', async () => {
    const dir = tempDir('pw-serial-');
    const w = watch(join(dir, 'ttyNOPE0'));
    await waitFor(() => last(w.statuses) === 'disconnected', 10_000);
    expect(w.statuses.at(-1)!.reason).toBe(`${join(dir, 'ttyNOPE0')} does not exist (is the decoder plugged in?)`);
    await w.link.close();
    expect(w.statuses.at(-1)).toEqual({ state: 'disconnected', reason: 'link closed' });
  });
});
