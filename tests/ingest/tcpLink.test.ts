import { createServer, type Server, type Socket } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { createDecoderLink } from '../../src/ingest/createDecoderLink.js';
import type { DecoderLink, LinkStatus } from '../../src/ingest/linkTypes.js';
import { initialDecoderSession, sessionCounters, stepDecoderSession } from '../../src/protocol/decoderSession.js';
import { OVERLONG_LINE } from '../../src/protocol/lineSplitter.js';
import { loadScenario } from '../../src/sim/loadScenario.js';
import { serveSimulator } from '../../src/sim/serveSimulator.js';
import { refLine } from '../protocol/referenceLine.js';
import { waitFor } from '../helpers/waitFor.js';

const cleanups: Array<() => Promise<void> | void> = [];
afterEach(async () => {
  for (const fn of cleanups.splice(0).reverse()) await fn();
});

async function listen(onSocket: (s: Socket) => void): Promise<{ server: Server; port: number; sockets: Set<Socket> }> {
  const sockets = new Set<Socket>();
  const server = createServer((s) => {
    sockets.add(s);
    s.on('close', () => sockets.delete(s));
    onSocket(s);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  cleanups.push(
    () =>
      new Promise<void>((r) => {
        for (const s of sockets) s.destroy();
        server.close(() => r());
      }),
  );
  return { server, port: (server.address() as { port: number }).port, sockets };
}

function watch(port: string, extra: { onOverlong?: (n: number) => void } = {}) {
  const lines: string[] = [];
  const statuses: LinkStatus[] = [];
  const link: DecoderLink = createDecoderLink({ port, baud: 115200, reconnectMs: 50, onLine: (l) => lines.push(l), onStatus: (s) => statuses.push(s), ...extra });
  cleanups.push(() => link.close());
  return { link, lines, statuses };
}

const last = (statuses: LinkStatus[]) => statuses.at(-1)?.state;

describe('decoder link over TCP (127.0.0.1, ephemeral port)', () => {
  it('delivers lines, goes down when the peer closes, and comes back', async () => {
    const line = refLine('TICK 5 1000 NN');
    const { port, sockets } = await listen((s) => s.write(`${line}\n`));
    const w = watch(`tcp://127.0.0.1:${port}`);
    await waitFor(() => w.lines.length === 1, 10_000);
    expect(w.lines).toEqual([line]);
    expect(w.statuses).toEqual([{ state: 'connecting' }, { state: 'connected' }]);

    for (const s of sockets) s.end();
    await waitFor(() => w.lines.length === 2, 10_000, () => `reconnect, got ${JSON.stringify(w.statuses)}`);
    expect(w.statuses.slice(2, 4)).toEqual([{ state: 'disconnected', reason: `tcp://127.0.0.1:${port} closed the connection` }, { state: 'connected' }]);
  });

  it('passes on half a line cut off by a disconnect, so it is dropped and counted rather than lost', async () => {
    const { port } = await listen((s) => s.end(`${refLine('TICK 0 1 N')}\nEDGE 4 1`));
    const w = watch(`tcp://127.0.0.1:${port}`);
    await waitFor(() => w.statuses.some((s) => s.state === 'disconnected'), 10_000);
    expect(w.lines.slice(0, 2)).toEqual([refLine('TICK 0 1 N'), 'EDGE 4 1']);
    let session = initialDecoderSession();
    for (const l of w.lines.slice(0, 2)) session = stepDecoderSession(session, l).session;
    expect(sessionCounters(session)).toMatchObject({ frames: 1, dropped: 1 });
  });

  it('says plainly when nothing listens there', async () => {
    const { server, port } = await listen(() => {});
    await new Promise<void>((r) => server.close(() => r()));
    const w = watch(`tcp://127.0.0.1:${port}`);
    await waitFor(() => last(w.statuses) === 'disconnected', 10_000);
    expect(w.statuses.at(-1)!.reason).toBe(`tcp://127.0.0.1:${port} refused the connection (nothing listening there)`);
  });

  it('discards an over-long line without buffering it, and it is still counted', async () => {
    const good = refLine('TICK 0 10 N');
    const { port } = await listen((s) => s.write(`${'x'.repeat(5000)}\n${good}\n`));
    const counted: number[] = [];
    const withHandler = watch(`tcp://127.0.0.1:${port}`, { onOverlong: (n) => counted.push(n) });
    await waitFor(() => withHandler.lines.length === 1, 10_000);
    expect(withHandler.lines).toEqual([good]);
    expect(counted).toEqual([1]);

    const plain = watch(`tcp://127.0.0.1:${port}`);
    await waitFor(() => plain.lines.length === 2, 10_000);
    expect(plain.lines).toEqual([OVERLONG_LINE, good]);
    let session = initialDecoderSession();
    for (const l of plain.lines) session = stepDecoderSession(session, l).session;
    expect(sessionCounters(session).droppedBy['too-long']).toBe(1);
  });

  it('carries a whole simulated run intact (served by pairwatch sim --listen)', async () => {
    const scenario = loadScenario(new URL('../../config/demo.scenario.yaml', import.meta.url).pathname);
    const server = await serveSimulator(scenario, { host: '127.0.0.1', port: 0, speed: 200, untilUs: 4_000_000 });
    cleanups.push(() => server.close());
    const w = watch(`tcp://127.0.0.1:${server.port}`);
    // The run ends after 4 simulated seconds and the server closes the socket.
    await waitFor(() => w.statuses.some((s) => s.state === 'disconnected'), 10_000);
    // The link reconnects at once and a second run starts: look at the first one.
    const secondHello = w.lines.findIndex((l, i) => i > 0 && l.startsWith('HELLO'));
    const firstRun = secondHello === -1 ? w.lines : w.lines.slice(0, secondHello);
    let session = initialDecoderSession();
    for (const l of firstRun) session = stepDecoderSession(session, l).session;
    expect(firstRun[0]).toMatch(/^HELLO 1 8 /);
    expect(sessionCounters(session)).toMatchObject({ dropped: 0, lost: 0 });
    expect(firstRun.filter((l) => l.startsWith('TICK'))).toHaveLength(20);
  });

  it('an exception in a callback is handed on and the link keeps going', async () => {
    const { port } = await listen((s) => s.write(`${refLine('TICK 0 1 N')}\n${refLine('TICK 1 2 N')}\n`));
    const errors: unknown[] = [];
    const lines: string[] = [];
    const link = createDecoderLink({
      port: `tcp://127.0.0.1:${port}`,
      baud: 115200,
      onLine: (l) => {
        lines.push(l);
        if (lines.length === 1) throw new Error('receiver bug');
      },
      onStatus: () => {},
      onCallbackError: (e) => errors.push(e),
    });
    cleanups.push(() => link.close());
    await waitFor(() => lines.length === 2, 10_000);
    expect(errors).toHaveLength(1);
  });

  it('an unusable port string is a status, not a throw', async () => {
    const w = watch('tcp://nowhere');
    await waitFor(() => last(w.statuses) === 'disconnected', 10_000);
    expect(w.statuses.at(-1)!.reason).toBe('"tcp://nowhere" is not tcp://HOST:PORT');
  });
});
