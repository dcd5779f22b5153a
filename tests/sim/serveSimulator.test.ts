import { connect } from 'node:net';
import { describe, expect, it } from 'vitest';
import { initialDecoderSession, sessionCounters, stepDecoderSession } from '../../src/protocol/decoderSession.js';
import { initialSplitter, splitChunk } from '../../src/protocol/lineSplitter.js';
import { loadScenario } from '../../src/sim/loadScenario.js';
import { serveSimulator } from '../../src/sim/serveSimulator.js';

const demo = loadScenario(new URL('../../config/demo.scenario.yaml', import.meta.url).pathname);

function collect(port: number): Promise<string[]> {
  return new Promise((resolve, reject) => {
    const socket = connect({ host: '127.0.0.1', port });
    let splitter = initialSplitter();
    const lines: string[] = [];
    socket.setEncoding('latin1');
    socket.on('data', (chunk: string) => {
      const r = splitChunk(splitter, chunk);
      splitter = r.state;
      lines.push(...r.lines);
    });
    socket.on('end', () => resolve(lines));
    socket.on('error', reject);
  });
}

describe('serveSimulator (TCP on 127.0.0.1)', () => {
  it('gives each client its own decoder from HELLO to the end of its run', async () => {
    // 3 simulated seconds at 100× is 30 ms of real time per client; the content does not depend on timing.
    const server = await serveSimulator(demo, { host: '127.0.0.1', port: 0, speed: 100, untilUs: 3_000_000 });
    try {
      expect(server.port).toBeGreaterThan(0);
      const [a, b] = await Promise.all([collect(server.port), collect(server.port)]);
      expect(a).toEqual(b);
      expect(a[0]).toMatch(/^HELLO 1 8 larkspur-sim-1\*[0-9A-F]{4}$/);
      let session = initialDecoderSession();
      for (const line of a) session = stepDecoderSession(session, line).session;
      // 3 s of TICKs at tick_ms 200 (the scenario) is 15.
      expect(a.filter((l) => l.startsWith('TICK'))).toHaveLength(15);
      expect(sessionCounters(session)).toMatchObject({ dropped: 0, lost: 0 });
    } finally {
      await server.close();
    }
  });
});
