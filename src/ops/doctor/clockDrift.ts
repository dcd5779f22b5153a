/**
 * The decoder's clock against the host's: `estimateClockDrift` fits the decoder's µs stamps to the
 * host's arrival times (pure arithmetic, tested on its own), and `checkClockDrift` turns the frames
 * one doctor listen heard into the "clock drift" line with its verdict.
 */
import { TIME_MODULO } from '../../protocol/frame.js';
import type { CheckResult } from './checkResult.js';
import { passed, warned } from './checkResult.js';
import type { ListenReport } from './listenToDecoder.js';

/** One timed frame: when the host received it, and the decoder's raw 32-bit µs time in it. */
export interface TimedSample {
  hostUs: number;
  decoderTime: number;
}

export interface DriftEstimate {
  /** Positive: the decoder's clock runs fast against the host's. Parts per million. */
  ppm: number;
  /** How far off the figure may be, from the host's timestamp resolution over the span measured. */
  uncertaintyPpm: number;
  spanMs: number;
  samples: number;
}

export interface DriftOptions {
  /**
   * The spread of the host's arrival timestamps for a line that was not held up. USB full-speed
   * devices are polled in 1 ms frames (USB 2.0 specification, §5.12), so 1000 µs by default.
   */
  timestampQuantumUs?: number;
  /** Below this span the estimate is not given at all. */
  minSpanMs?: number;
}

/**
 * Estimates the decoder clock's rate error against the host clock from frames received in one
 * decoder session (no HELLO in between). Arrival times include a variable delay (USB polling, the
 * event loop); the least-delayed sample is the truest, which is the reasoning of NTP's clock filter
 * (RFC 5905, §10): in the first and the last quarter of the run take the sample with the smallest
 * host−decoder offset, and compare the two. Quarters, not halves, so the two picks are always at
 * least half the run apart.
 */
export function estimateClockDrift(samples: readonly TimedSample[], options: DriftOptions = {}): DriftEstimate | { reason: string } {
  const quantumUs = options.timestampQuantumUs ?? 1000;
  const minSpanMs = options.minSpanMs ?? 500;
  if (samples.length < 4) return { reason: `only ${samples.length} timed frame${samples.length === 1 ? '' : 's'} heard; need at least 4` };

  // Unwrap the 32-bit µs counter (it wraps every 4294.967296 s) frame to frame.
  const decoderUs: number[] = [samples[0]!.decoderTime];
  for (let i = 1; i < samples.length; i++) {
    const step = (samples[i]!.decoderTime - samples[i - 1]!.decoderTime + TIME_MODULO) % TIME_MODULO;
    decoderUs.push(decoderUs[i - 1]! + step);
  }
  const quarter = Math.max(1, Math.floor(samples.length / 4));
  const leastDelayed = (from: number, to: number) => {
    let best = from;
    for (let i = from; i < to; i++) {
      if (samples[i]!.hostUs - decoderUs[i]! < samples[best]!.hostUs - decoderUs[best]!) best = i;
    }
    return best;
  };
  const a = leastDelayed(0, quarter);
  const b = leastDelayed(samples.length - quarter, samples.length);
  const hostSpanUs = samples[b]!.hostUs - samples[a]!.hostUs;
  if (hostSpanUs < minSpanMs * 1000) {
    return { reason: `the frames heard span only ${(hostSpanUs / 1000).toFixed(0)} ms; need at least ${minSpanMs} ms` };
  }
  const decoderSpanUs = decoderUs[b]! - decoderUs[a]!;
  return {
    ppm: ((decoderSpanUs - hostSpanUs) / hostSpanUs) * 1e6,
    uncertaintyPpm: ((2 * quantumUs) / hostSpanUs) * 1e6,
    spanMs: hostSpanUs / 1000,
    samples: samples.length,
  };
}

export interface DriftCheckOptions extends DriftOptions {
  checkName: string;
  /**
   * Drift beyond this is reported. A quartz-timed decoder is normally within about ±100 ppm
   * (common practice, value from memory); 1000 ppm (0.1 %) leaves room for that and for the host,
   * yet is far below what would matter to pulse classification (intervals are judged to ±50 %).
   */
  warnPpm?: number;
}

/** Compares the decoder's µs clock across the frames heard with the host's monotonic clock. */
export function checkClockDrift(report: ListenReport, options: DriftCheckOptions): CheckResult {
  const warnPpm = options.warnPpm ?? 1000;
  // Only frames of the last decoder session: a HELLO restarts the decoder's clock.
  let samples: TimedSample[] = [];
  for (const line of report.lines) {
    if (!line.outcome.ok) continue;
    const frame = line.outcome.frame;
    if (frame.type === 'HELLO') samples = [];
    else samples.push({ hostUs: line.hostUs, decoderTime: frame.time });
  }
  const estimate = estimateClockDrift(samples, options);
  if ('reason' in estimate) {
    return warned(options.checkName, `not measured: ${estimate.reason}`, 'listen longer, e.g. `pairwatch doctor --listen 20`');
  }
  const measured = `${formatPpm(estimate.ppm)} ± ${Math.round(estimate.uncertaintyPpm)} ppm over ${(estimate.spanMs / 1000).toFixed(1)} s, ${estimate.samples} frames`;
  if (Math.abs(estimate.ppm) <= Math.max(warnPpm, estimate.uncertaintyPpm)) {
    return passed(options.checkName, `decoder clock agrees with the host (${measured})`);
  }
  return warned(
    options.checkName,
    `decoder clock runs ${estimate.ppm > 0 ? 'fast' : 'slow'} against the host (${measured})`,
    'check that the host clock is synchronised (see "clock sync"); if it is, the decoder\'s own clock is off and pulse periods it reports are off by the same share',
  );
}

function formatPpm(ppm: number): string {
  const rounded = Math.round(ppm);
  return `${rounded > 0 ? '+' : ''}${rounded} ppm`;
}
