import type { CheckResult } from './checkResult.js';
import { passed, warned } from './checkResult.js';
import { estimateClockDrift, type DriftOptions, type TimedSample } from './estimateClockDrift.js';
import type { ListenReport } from './listenToDecoder.js';

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
