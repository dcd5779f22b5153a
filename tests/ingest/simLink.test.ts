import { copyFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { createDecoderLink } from '../../src/ingest/createDecoderLink.js';
import type { DecoderLink, LinkStatus } from '../../src/ingest/linkTypes.js';
import { parseLine } from '../../src/protocol/parseLine.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';

const demoFile = new URL('../../config/demo.scenario.yaml', import.meta.url).pathname;
// Before the link cleanups: after-hooks run in reverse, so the folders go once the links are closed.
const tempDir = useTempDirs('each');
const cleanups: Array<() => Promise<void>> = [];
afterEach(async () => {
  for (const fn of cleanups.splice(0)) await fn();
});

function watch(port: string, scenarioBaseDir: string) {
  const lines: string[] = [];
  const statuses: LinkStatus[] = [];
  const link: DecoderLink = createDecoderLink({ port, baud: 115200, scenarioBaseDir, reconnectMs: 50, simSpeed: 50, onLine: (l) => lines.push(l), onStatus: (s) => statuses.push(s) });
  cleanups.push(() => link.close());
  return { link, lines, statuses };
}

describe('decoder link to the in-process simulator (sim:FILE)', () => {
  it('resolves a relative file against scenarioBaseDir and delivers its lines', async () => {
    const dir = tempDir('pw-simlink-');
    copyFileSync(demoFile, join(dir, 'demo.scenario.yaml'));
    const w = watch('sim:demo.scenario.yaml', dir);
    await waitFor(() => w.lines.length >= 20, 10_000);
    expect(w.statuses).toEqual([{ state: 'connecting' }, { state: 'connected' }]);
    expect(w.lines[0]).toMatch(/^HELLO 1 8 larkspur-sim-1\*/);
    expect(w.lines.every((l) => parseLine(l).ok)).toBe(true);
  });

  it('a broken scenario is a disconnected status naming the field, retried until it is fixed', async () => {
    const dir = tempDir('pw-simlink-');
    const file = join(dir, 'site.scenario.yaml');
    writeFileSync(file, 'decoder: { inputs: 0 }\n');
    const w = watch(`sim:${file}`, '/nowhere');
    await waitFor(() => w.statuses.at(-1)?.state === 'disconnected', 10_000);
    expect(w.statuses.at(-1)!.reason).toMatch(/^simulated decoder .*site\.scenario\.yaml: decoder\.inputs: /);
    writeFileSync(file, 'decoder: { inputs: 1 }\nloops: [ { input: 1 } ]\n');
    await waitFor(() => w.statuses.at(-1)?.state === 'connected', 10_000);
    await waitFor(() => w.lines.length > 0, 10_000);
  });

  it('a missing scenario file says so', async () => {
    const dir = tempDir('pw-simlink-');
    const w = watch('sim:missing.yaml', dir);
    await waitFor(() => w.statuses.at(-1)?.state === 'disconnected', 10_000);
    expect(w.statuses.at(-1)!.reason).toContain('cannot read the scenario file: file not found');
  });
});
