import { createServer, type Socket } from 'node:net';
import type { Scenario } from './scenarioSchema.js';
import { runSimulator, type SimulatorRun } from './runSimulator.js';

export interface ServeSimulatorOptions {
  host: string;
  /** 0 picks a free port. */
  port: number;
  speed?: number;
  /** Each client's stream ends (and its socket closes) after this much simulated time. */
  untilUs?: number;
}

export interface SimulatorServer {
  /** The address actually bound (the real port when 0 was asked for). */
  readonly host: string;
  readonly port: number;
  readonly clients: number;
  close(): Promise<void>;
}

/**
 * Serves the simulated decoder over raw TCP, as a serial-to-network box would: every client gets its
 * own decoder, switched on when it connects (HELLO first), so each sees a whole run.
 */
export async function serveSimulator(scenario: Scenario, options: ServeSimulatorOptions): Promise<SimulatorServer> {
  const sockets = new Map<Socket, SimulatorRun>();
  const server = createServer((socket) => {
    socket.setNoDelay(true);
    const run = runSimulator(scenario, {
      speed: options.speed ?? 1,
      ...(options.untilUs !== undefined ? { untilUs: options.untilUs } : {}),
      write: (line) => {
        if (!socket.destroyed) socket.write(`${line}\n`);
      },
    });
    sockets.set(socket, run);
    void run.done.then(() => {
      if (!socket.destroyed) socket.end();
    });
    const forget = () => {
      run.stop();
      sockets.delete(socket);
    };
    socket.on('close', forget);
    // A client that vanishes is its own business: drop it, keep serving the others.
    socket.on('error', forget);
  });

  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(options.port, options.host, () => {
      server.off('error', reject);
      resolve();
    });
  });
  const address = server.address();
  const port = typeof address === 'object' && address ? address.port : options.port;

  return {
    host: options.host,
    port,
    get clients() {
      return sockets.size;
    },
    close: () =>
      new Promise<void>((resolve) => {
        for (const [socket, run] of sockets) {
          run.stop();
          socket.destroy();
        }
        sockets.clear();
        server.close(() => resolve());
      }),
  };
}
