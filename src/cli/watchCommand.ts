import { parseArgs } from 'node:util';
import { currentLoopState, intervalFigures, lastPulseUs, takeQuality } from '../classify/index.js';
import { DEFAULT_LOOP_SETTINGS } from '../classify/loopSettings.js';
import { createDecoderLink } from '../ingest/createDecoderLink.js';
import type { Band } from '../model/band.js';
import { indexSite, initialSiteState, stepSite } from '../site/siteStep.js';
import type { SiteState } from '../site/siteTypes.js';
import type { CliCommand } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';

const MAX_INPUTS = 64;

/**
 * `pairwatch watch PORT`: commissioning view for wiring a new loop. Shows, live, each input's band,
 * pulse period and jitter and the classifier's verdict with default settings (or --period).
 */
const USAGE = `usage: pairwatch watch PORT [--baud 250000] [--period MS] [--inputs N] [--seconds N]
  For wiring a new loop: opens a decoder port directly (not while the service holds it) and shows each
  input's band, pulse period, jitter and the verdict, refreshed every second. Ctrl-C stops.
  PORT: /dev/ttyACM0, tcp://host:port or sim:FILE
`;

export const watchCommand = defineCommand({ name: 'watch', usage: USAGE, run: async (argv, io) => {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      baud: { type: 'string', default: '250000' },
      period: { type: 'string' },
      seconds: { type: 'string' },
      inputs: { type: 'string' },
    },
  });
  const port = positionals[0];
  if (!port) throw new UsageError('give the decoder PORT to watch');
  const baud = Number(values.baud);
  const periodMs = values.period ? Number(values.period) : DEFAULT_LOOP_SETTINGS.periodMs;
  if (!Number.isInteger(baud) || baud <= 0) return usageError(io, `--baud: "${values.baud}" is not a positive whole number`);
  if (!Number.isFinite(periodMs) || periodMs <= 0) return usageError(io, `--period: "${values.period}" is not a positive number of milliseconds`);
  const settings = { ...DEFAULT_LOOP_SETTINGS, periodMs, tripMs: periodMs * 3 };
  const index = indexSite({
    loops: Array.from({ length: MAX_INPUTS }, (_, i) => ({ id: `input-${i + 1}`, decoderId: 'watched', input: i + 1, settings })),
    decoders: [{ id: 'watched', silenceMs: 2000 }],
  });
  let site: SiteState = initialSiteState(index.definition, Date.now());
  let inputs = values.inputs ? Number(values.inputs) : 0;
  const bands = new Map<number, Band>();
  let linkText = 'connecting';
  let lines = 0;

  const link = createDecoderLink({
    port,
    baud,
    scenarioBaseDir: process.cwd(),
    onLine(line) {
      lines += 1;
      const stepped = stepSite(index, site, { kind: 'line', decoderId: 'watched', line }, Date.now());
      site = stepped.state;
      const hello = site.decoders.watched?.session.hello;
      if (hello && !values.inputs) inputs = hello.loops;
      for (const effect of stepped.effects) {
        if (effect.kind === 'edge') bands.set(effect.input, effect.band);
      }
      const match = /^TICK \d+ \d+ ([ONH]+)\*/.exec(line);
      if (match?.[1]) {
        if (!values.inputs && !hello) inputs = Math.min(MAX_INPUTS, match[1].length);
        [...match[1]].forEach((band, i) => bands.set(i + 1, band as Band));
      }
    },
    onStatus(status) {
      linkText = status.state + (status.reason ? ` (${status.reason})` : '');
    },
  });

  const tty = Boolean((io.stdout as NodeJS.WriteStream).isTTY);
  const render = () => {
    site = stepSite(index, site, { kind: 'clock' }, Date.now()).state;
    const rows: string[] = [];
    rows.push(`pairwatch watch ${port} — link ${linkText}, ${lines} lines — expected period ${periodMs} ms`);
    rows.push('input  band  state     pulses  period ms  jitter ms  last pulse  verdict');
    for (let input = 1; input <= Math.max(1, inputs); input++) {
      const taken = takeQuality(site.loops[input - 1]!);
      site = { ...site, loops: site.loops.map((s, i) => (i === input - 1 ? taken.state : s)) };
      const state = currentLoopState(taken.state);
      const { meanMs, jitterMs } = intervalFigures(taken.quality);
      const last = lastPulseUs(taken.state);
      const lastText = last === null ? '—' : 'seen';
      rows.push(
        `${String(input).padStart(5)}  ${(bands.get(input) ?? '?').padEnd(4)}  ${state.padEnd(8)}  ${String(taken.quality.pulses).padStart(6)}  ` +
          `${(meanMs === null ? '—' : meanMs.toFixed(1)).padStart(9)}  ${(jitterMs === null ? '—' : jitterMs.toFixed(2)).padStart(9)}  ${lastText.padStart(10)}  ${verdict(state, meanMs, periodMs)}`,
      );
    }
    io.stdout.write((tty ? '\x1b[2J\x1b[H' : '') + rows.join('\n') + '\n' + (tty ? '' : '\n'));
  };
  const timer = setInterval(render, 1000);
  const stopAfter = values.seconds ? Number(values.seconds) * 1000 : null;
  await new Promise<void>((resolveWait) => {
    const finish = () => resolveWait();
    process.once('SIGINT', finish);
    process.once('SIGTERM', finish);
    if (stopAfter !== null) setTimeout(finish, stopAfter);
  });
  clearInterval(timer);
  render();
  await link.close();
  return 0;
} });

function verdict(state: string, meanMs: number | null, periodMs: number): string {
  switch (state) {
    case 'healthy':
      return meanMs !== null && Math.abs(meanMs - periodMs) > periodMs * 0.2 ? 'healthy, but period is off — check --period' : 'good: node pulsing';
    case 'tripped':
      return 'no pulses: node past threshold, unpowered, or wired the wrong way round';
    case 'open':
      return 'no current: check the pair for a break or a loose terminal';
    case 'shorted':
      return 'high current all the time: check for a short';
    case 'offline':
      return 'decoder silent';
    default:
      return 'waiting…';
  }
}

function usageError(_io: Parameters<CliCommand>[1], message: string): never {
  throw new UsageError(message);
}
