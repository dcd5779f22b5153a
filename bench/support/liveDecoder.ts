import { performance } from 'node:perf_hooks';
import { createFrameMaker } from './frameMaker.js';

/**
 * A decoder played in real time inside the bench process: every loop pulses 1 ms every 500 ms while
 * it is "alive", a TICK goes out every `tickMs`, and each batch of lines is handed to `feed` in
 * decoder-time order. Decoder time is wall time since start.
 */
export interface LiveDecoderOptions {
  loops: number;
  feed(lines: readonly string[]): void;
  tickMs?: number;
  periodMs?: number;
}

export interface LiveDecoder {
  start(): void;
  /** Stops (false) or resumes (true) one loop's heartbeat from now on. */
  setAlive(input: number, alive: boolean): void;
  stop(): void;
}

const PULSE_US = 1_000;
const PUMP_MS = 10;

export function createLiveDecoder(options: LiveDecoderOptions): LiveDecoder {
  const periodUs = (options.periodMs ?? 500) * 1000;
  const tickUs = (options.tickMs ?? 100) * 1000;
  const frames = createFrameMaker();
  const alive = Array.from({ length: options.loops }, () => true);
  // Nodes are not in step: spread their phases over the period.
  const nextPulseUs = Array.from({ length: options.loops }, (_, i) => 50_000 + Math.round((i * periodUs) / options.loops));
  const endOfPulseUs: Array<number | null> = Array.from({ length: options.loops }, () => null);
  let nextTickUs = tickUs;
  const bands: string[] = Array.from({ length: options.loops }, () => 'N');
  let t0 = 0;
  let timer: NodeJS.Timeout | null = null;
  const nowUs = () => (performance.now() - t0) * 1000;

  const pump = () => {
    // Everything up to `until` goes out now, in time order, so decoder time never runs backwards
    // across batches; a pulse may start in one batch and end in the next.
    const until = nowUs();
    const edges: Array<{ atUs: number; input: number; band: 'H' | 'N' }> = [];
    for (let i = 0; i < options.loops; i++) {
      for (;;) {
        const owedN = endOfPulseUs[i]!;
        if (owedN !== null) {
          if (owedN > until) break;
          edges.push({ atUs: owedN, input: i + 1, band: 'N' });
          endOfPulseUs[i] = null;
        } else {
          const at = nextPulseUs[i]!;
          if (at > until) break;
          if (alive[i]) {
            edges.push({ atUs: at, input: i + 1, band: 'H' });
            endOfPulseUs[i] = at + PULSE_US;
          }
          nextPulseUs[i] = at + periodUs;
        }
      }
    }
    edges.sort((a, b) => a.atUs - b.atUs);
    // Lines are built in wire order, so their sequence numbers run on without a gap, and each TICK
    // carries the bands as they are at its instant.
    const lines: string[] = [];
    let e = 0;
    for (;;) {
      const edge = edges[e];
      const tickDue = nextTickUs <= until;
      if (edge && (!tickDue || edge.atUs <= nextTickUs)) {
        lines.push(frames.edge(edge.atUs, edge.input, edge.band));
        bands[edge.input - 1] = edge.band;
        e++;
      } else if (tickDue) {
        lines.push(frames.tick(nextTickUs, bands.join('')));
        nextTickUs += tickUs;
      } else break;
    }
    if (lines.length > 0) options.feed(lines);
  };

  return {
    start() {
      t0 = performance.now();
      options.feed([frames.hello(options.loops), frames.tick(0, bands.join(''))]);
      timer = setInterval(pump, PUMP_MS);
    },
    setAlive(input, value) {
      const i = input - 1;
      if (value && !alive[i]) nextPulseUs[i] = Math.round(nowUs()) + 100_000;
      alive[i] = value;
    },
    stop() {
      if (timer) clearInterval(timer);
      timer = null;
    },
  };
}
