import { parseArgs } from 'node:util';
import { parseDuration } from '../config/duration.js';
import { loadScenario } from '../sim/loadScenario.js';
import { runSimulator } from '../sim/runSimulator.js';
import { ScenarioError } from '../sim/scenarioError.js';
import type { Scenario } from '../sim/scenarioSchema.js';
import { serveSimulator } from '../sim/serveSimulator.js';
import type { CliIo } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';

const USAGE = `usage: pairwatch sim SCENARIO [--listen tcp://127.0.0.1:PORT] [--speed N] [--duration 90s]

Runs a simulated line decoder from a scenario file and writes its protocol lines to stdout, or, with
--listen, serves them to every TCP client (each client gets its own decoder, starting with HELLO).
  --speed N        simulated seconds per real second (default 1)
  --duration D     stop after D of simulated time (e.g. 90s, 10m); with --listen, per client
`;

const MAX_SPEED = 100_000;

/** `pairwatch sim`: the simulated decoder, for the demo, for commissioning practice and for tests. */
export const simCommand = defineCommand({ name: 'sim', usage: USAGE, run: async (argv, io) => {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      listen: { type: 'string' },
      speed: { type: 'string' },
      duration: { type: 'string' },
    },
  });
  const usageError = (message: string): never => {
    throw new UsageError(message);
  };
  if (positionals.length !== 1) return usageError(positionals.length === 0 ? 'give a scenario file' : 'give exactly one scenario file');

  const speed = values.speed === undefined ? 1 : Number(values.speed);
  if (!Number.isFinite(speed) || speed <= 0 || speed > MAX_SPEED) return usageError(`--speed: "${values.speed}" must be a number above 0 and at most ${MAX_SPEED}`);
  let untilUs: number | undefined;
  if (values.duration !== undefined) {
    const ms = parseDuration(values.duration);
    if (ms === undefined || ms <= 0) return usageError(`--duration: "${values.duration}" is not a duration (write e.g. 90s, 10m, 2h)`);
    untilUs = ms * 1000;
  }
  let listen: { host: string; port: number } | undefined;
  if (values.listen !== undefined) {
    listen = parseListen(values.listen);
    if (!listen) return usageError(`--listen: "${values.listen}" must be tcp://HOST:PORT, e.g. tcp://127.0.0.1:7070`);
  }

  let scenario: Scenario;
  try {
    scenario = loadScenario(positionals[0]!);
  } catch (err) {
    if (!(err instanceof ScenarioError)) throw err;
    for (const line of err.lines()) io.stderr.write(`${err.file}: ${line}\n`);
    return 2;
  }

  return listen ? serve(scenario, listen, speed, untilUs, io) : toStdout(scenario, speed, untilUs, io);
} });

async function toStdout(scenario: Scenario, speed: number, untilUs: number | undefined, io: CliIo): Promise<number> {
  const run = runSimulator(scenario, {
    speed,
    ...(untilUs !== undefined ? { untilUs } : {}),
    write: (line) => {
      io.stdout.write(`${line}\n`);
    },
  });
  // A reader that goes away (`| head`) ends the run quietly.
  const onError = () => run.stop();
  io.stdout.on('error', onError);
  const release = stopOnSignals(() => run.stop());
  await run.done;
  release();
  io.stdout.off('error', onError);
  return 0; // a closed reader (broken pipe) is a normal way to end
}

async function serve(scenario: Scenario, listen: { host: string; port: number }, speed: number, untilUs: number | undefined, io: CliIo): Promise<number> {
  let server;
  try {
    server = await serveSimulator(scenario, { ...listen, speed, ...(untilUs !== undefined ? { untilUs } : {}) });
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    const why = code === 'EADDRINUSE' ? 'the port is already in use' : code === 'EACCES' ? 'permission denied (ports below 1024 need privileges)' : code === 'EADDRNOTAVAIL' ? 'this machine has no such address' : (err as Error).message;
    io.stderr.write(`pairwatch sim: cannot listen on tcp://${listen.host}:${listen.port}: ${why}\n`);
    return 1;
  }
  io.stderr.write(`pairwatch sim: serving the simulated decoder on tcp://${formatHost(server.host)}:${server.port} (Ctrl-C to stop)\n`);
  await new Promise<void>((resolve) => {
    const release = stopOnSignals(() => {
      release();
      resolve();
    });
  });
  await server.close();
  return 0;
}

function parseListen(text: string): { host: string; port: number } | undefined {
  const match = /^tcp:\/\/(\[[0-9A-Fa-f:]+\]|[A-Za-z0-9.-]+):(\d{1,5})$/.exec(text);
  if (!match) return undefined;
  const port = Number(match[2]);
  if (port > 65535) return undefined;
  return { host: match[1]!.replace(/^\[|\]$/g, ''), port };
}

function formatHost(host: string): string {
  return host.includes(':') ? `[${host}]` : host;
}

function stopOnSignals(stop: () => void): () => void {
  const handler = () => stop();
  process.once('SIGINT', handler);
  process.once('SIGTERM', handler);
  return () => {
    process.off('SIGINT', handler);
    process.off('SIGTERM', handler);
  };
}
