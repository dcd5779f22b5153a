import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { simCommand } from '../../src/cli/simCommand.js';
import { parseLine } from '../../src/protocol/parseLine.js';
import { createSimulator } from '../../src/sim/createSimulator.js';
import { loadScenario } from '../../src/sim/loadScenario.js';
import { captureCliIo } from '../helpers/captureCliIo.js';
import { useTempDirs } from '../helpers/tempDir.js';

const tempDir = useTempDirs();

const demoFile = new URL('../../config/demo.scenario.yaml', import.meta.url).pathname;


describe('pairwatch sim', () => {
  it('writes the scenario as protocol lines to stdout for --duration of simulated time', async () => {
    const t = captureCliIo();
    const code = await simCommand([demoFile, '--duration', '5s', '--speed', '500'], t.io);
    expect(code).toBe(0);
    const lines = t.out().split('\n');
    expect(lines.pop()).toBe('');
    expect(lines).toEqual(createSimulator(loadScenario(demoFile)).advanceTo(5_000_000).map((l) => l.line));
    expect(lines.every((l) => parseLine(l).ok)).toBe(true);
    expect(t.err()).toBe('');
  });

  it('refuses bad usage with exit 2 and a plain message', async () => {
    for (const [args, message] of [
      [[], 'give a scenario file'],
      [[demoFile, '--speed', 'fast'], '--speed: "fast" must be a number'],
      [[demoFile, '--duration', 'long'], '--duration: "long" is not a duration'],
      [[demoFile, '--listen', 'localhost:7000'], '--listen: "localhost:7000" must be tcp://HOST:PORT'],
    ] as const) {
      const t = captureCliIo();
      expect(await simCommand([...args], t.io)).toBe(2);
      expect(t.err()).toContain(message);
      expect(t.err()).not.toMatch(/\n\s+at /); // no stack trace
    }
  });

  it('prints each scenario problem with its field and exits 2', async () => {
    const dir = tempDir('pw-simcmd-');
    const file = join(dir, 'bad.yaml');
    writeFileSync(file, 'decoder: { inputs: 2 }\nloops:\n  - { input: 5 }\nevents:\n  - { at: 1s, action: cut, input: 5, colour: red }\n');
    const t = captureCliIo();
    expect(await simCommand([file], t.io)).toBe(2);
    expect(t.err()).toContain(`${file}: loops[0].input: 5 is past the decoder's 2 inputs`);
    expect(t.err()).toContain(`${file}: events[0].colour: unknown key`);
  });

  it('says when the listen port cannot be had', async () => {
    const { createServer } = await import('node:net');
    const blocker = createServer();
    await new Promise<void>((r) => blocker.listen(0, '127.0.0.1', () => r()));
    const port = (blocker.address() as { port: number }).port;
    const t = captureCliIo();
    try {
      expect(await simCommand([demoFile, '--listen', `tcp://127.0.0.1:${port}`], t.io)).toBe(1);
      expect(t.err()).toContain('the port is already in use');
    } finally {
      blocker.close();
    }
  });
});
