import { TIME_MODULO } from '../../protocol/frame.js';

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
