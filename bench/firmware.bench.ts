import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseLine } from '../src/protocol/parseLine.js';
import { parseScenario } from '../src/sim/loadScenario.js';
import { findPackageRoot } from '../src/store/openDatabase.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { infoRow } from './benchTypes.js';
import { runFirmware, truthFromPins, waveformFromScenario, type BandStep, type Capture, type Waveform } from './firmwareSim.js';
import { percentile } from './support/percentile.js';

/**
 * The decoder firmware under simavr (firmware/decoder, tests/firmware/harness.c): the largest edge
 * rate spread over 8 loops that it reports without loss, and its timestamp error, from simavr's cycle
 * counts, beside what the protocol needs: 8 loops × 2 edges per 500 ms heartbeat = 32 edges/s.
 */
const PROTOCOL_NEED_EDGES_PER_S = 32;

/** Pulses of 100 µs, round-robin over the 8 loops, so that edges come at `rate` per second in all. */
function evenLoad(rate: number, durationUs: number): Waveform {
  const steps: BandStep[] = [];
  const pulseGapUs = 2e6 / rate;
  for (let i = 0, t = 50_000; t < durationUs; i++, t += pulseGapUs) {
    const loop = (i % 8) + 1;
    steps.push({ atUs: Math.round(t), loop, band: 'H' }, { atUs: Math.round(t) + 100, loop, band: 'N' });
  }
  return { initial: Array(8).fill('N'), steps };
}

function edgesAndFaults(capture: Capture) {
  const frames = capture.lines.map((l) => parseLine(l.text)).flatMap((p) => (p.ok ? [p.frame] : []));
  return { edges: frames.flatMap((f) => (f.type === 'EDGE' ? [f] : [])), faults: frames.filter((f) => f.type === 'FAULT').length, bad: capture.lines.length - frames.length };
}

async function lossless(rate: number, durationUs: number): Promise<boolean> {
  const waveform = evenLoad(rate, durationUs);
  const capture = await runFirmware({ waveform, untilUs: durationUs + 300_000 });
  const { edges, faults, bad } = edgesAndFaults(capture);
  return faults === 0 && bad === 0 && edges.length === truthFromPins(capture, waveform.initial).length;
}

/** Reported minus true time for every band change, µs, matched per loop in order. */
function timestampErrors(capture: Capture, waveform: Waveform): number[] {
  const truth = truthFromPins(capture, waveform.initial);
  const { edges } = edgesAndFaults(capture);
  const errors: number[] = [];
  for (let loop = 1; loop <= 8; loop++) {
    const want = truth.filter((t) => t.loop === loop);
    edges.filter((e) => e.loop === loop).forEach((e, i) => {
      if (want[i]) errors.push(e.time - want[i]!.timeUs);
    });
  }
  return errors;
}

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const durationUs = opts.smoke ? 300_000 : 1_500_000;
  const steps = opts.smoke ? 2 : 7;
  let lo = PROTOCOL_NEED_EDGES_PER_S;
  let hi = 20_000;
  if (!(await lossless(lo, durationUs))) lo = 0;
  for (let i = 0; i < steps && lo > 0; i++) {
    const mid = Math.round(Math.sqrt(lo * hi));
    if (await lossless(mid, durationUs)) lo = mid;
    else hi = mid;
  }

  const demo = parseScenario(readFileSync(join(findPackageRoot(), 'config', 'demo.scenario.yaml'), 'utf8'));
  const windowUs = opts.smoke ? 1_000_000 : 3_000_000;
  const waveform = waveformFromScenario(demo, 24_000_000, 24_000_000 + windowUs);
  const errors = timestampErrors(await runFirmware({ waveform, untilUs: windowUs }), waveform);

  const rateRow: BenchRow = {
    figure: 'largest lossless edge rate, 8 loops',
    value: lo,
    unit: 'edges/s',
    reference: 'protocol need: 8 loops × 2 edges / 500 ms',
    referenceValue: PROTOCOL_NEED_EDGES_PER_S,
    ratio: lo / PROTOCOL_NEED_EDGES_PER_S,
    target: '≥ 1×',
    met: lo >= PROTOCOL_NEED_EDGES_PER_S,
  };
  return {
    name: 'firmware',
    title: 'Decoder firmware under simavr (ATmega328P, 16 MHz)',
    rows: [
      rateRow,
      infoRow('timestamp error p50', percentile(errors, 50), 'µs'),
      infoRow('timestamp error p99', percentile(errors, 99), 'µs'),
      infoRow('timestamp error max', Math.max(...errors), 'µs'),
      infoRow('timestamp error min', Math.min(...errors), 'µs'),
      infoRow('band changes measured', errors.length, 'edges'),
    ],
    notes: [
      `Edge rate: pulses of 100 µs round-robin over 8 loops for ${durationUs / 1e6} s, searched between ${PROTOCOL_NEED_EDGES_PER_S} and 20000 edges/s (${steps} steps, geometric); lossless = one EDGE per change and no FAULT. Upper bound of the search: ${hi} edges/s.`,
      'The link is the limit: simavr 1.6 times a byte as 11 bit times (44 µs at 250000 baud), the real 8N1 frame is 10 (40 µs), so a real board carries about 10 % more than measured here.',
      `Timestamp error: the demo scenario's ${windowUs / 1e6} s from 24 s (pump-house cut), reported time minus the firmware clock at the cycle the pin changed (Timer 1 arithmetic from the datasheet); the design bound is -1..+20 µs.`,
    ],
  };
}
