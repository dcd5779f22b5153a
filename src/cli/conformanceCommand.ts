import { parseArgs } from 'node:util';
import { createDecoderLink } from '../ingest/createDecoderLink.js';
import { checkLine, formatVerdicts, initialConformance, judgeConformance, noteOverlong, type ConformanceState } from '../protocol/conformance.js';
import type { CliCommand } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';

/** The firmware's speed (firmware/decoder/uart.h) and the config's default `baud`. */
const DEFAULT_BAUD = 250000;
const DEFAULT_SECONDS = 10;

const USAGE = `usage: pairwatch conformance PORT [--seconds ${DEFAULT_SECONDS}] [--baud ${DEFAULT_BAUD}]
  Listens to a decoder (not while the monitor holds its port) and prints one line per
  protocol v1 rule with pass or FAIL. Exit 0 when every rule passes, 1 when one fails.
  PORT: /dev/ttyUSB0, tcp://host:port or sim:FILE
`;

/**
 * `pairwatch conformance PORT`: checks any decoder's stream against protocol v1, rule by rule
 * (src/protocol/conformance.ts), for people building their own decoder.
 */
export const conformanceCommand = defineCommand({ name: 'conformance', usage: USAGE, run: async (argv, io) => {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      seconds: { type: 'string', default: String(DEFAULT_SECONDS) },
      baud: { type: 'string', default: String(DEFAULT_BAUD) },
      help: { type: 'boolean', short: 'h', default: false },
    },
  });
  if (values.help) {
    io.stdout.write(USAGE);
    return 0;
  }
  const port = positionals[0];
  if (!port) throw new UsageError('a decoder PORT is needed');
  if (positionals.length > 1) throw new UsageError(`unexpected argument "${positionals[1]}"`);
  const seconds = Number(values.seconds);
  const baud = Number(values.baud);
  if (!Number.isFinite(seconds) || seconds <= 0) return usageError(io, `--seconds: "${values.seconds}" is not a positive number`);
  if (!Number.isInteger(baud) || baud <= 0) return usageError(io, `--baud: "${values.baud}" is not a positive whole number`);

  let state: ConformanceState = initialConformance();
  let linkNote = '';
  const link = createDecoderLink({
    port,
    baud,
    scenarioBaseDir: process.cwd(),
    onLine(line) {
      state = checkLine(state, line);
    },
    onOverlong(count) {
      state = noteOverlong(state, count);
    },
    onStatus(status) {
      if (status.state === 'disconnected' && status.reason && status.reason !== 'link closed') linkNote = status.reason;
    },
  });
  await new Promise<void>((resolveWait) => {
    const timer = setTimeout(finish, seconds * 1000);
    function finish(): void {
      clearTimeout(timer);
      process.off('SIGINT', finish);
      resolveWait();
    }
    process.once('SIGINT', finish);
  });
  await link.close();

  const verdicts = judgeConformance(state);
  io.stdout.write(`pairwatch conformance ${port}: ${state.lines} lines in ${seconds} s${linkNote ? ` (link: ${linkNote})` : ''}\n`);
  for (const line of formatVerdicts(verdicts)) io.stdout.write(`${line}\n`);
  const failures = verdicts.filter((v) => !v.pass).length;
  io.stdout.write(failures === 0 ? 'conforms to decoder protocol v1\n' : `${failures} rule(s) failed\n`);
  return failures === 0 ? 0 : 1;
} });

function usageError(io: Parameters<CliCommand>[1], message: string): number {
  io.stderr.write(`pairwatch conformance: ${message}\n${USAGE}`);
  return 2;
}
