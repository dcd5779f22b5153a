/**
 * What every benchmark scenario hands back. Each figure is measured in the same run as its reference,
 * so the ratio holds on a noisy machine even when the absolute numbers wander.
 */
export interface BenchRow {
  figure: string;
  value: number;
  unit: string;
  /** What the figure is compared with (a measured baseline, a link rate, a limit), or null. */
  reference: string | null;
  referenceValue: number | null;
  /** value ÷ referenceValue, when that comparison means something. */
  ratio: number | null;
  /** The target in words (`≥ 250×`, `≤ 50 ms`), or null for a figure shown for information. */
  target: string | null;
  /** Whether the target is met; null when the row has no target. */
  met: boolean | null;
}

export interface BenchResult {
  name: BenchName;
  title: string;
  rows: BenchRow[];
  /** What was fed and how it was measured, in plain words, printed under the table. */
  notes: string[];
}

export interface BenchOptions {
  /** A short run that only proves the scenario still works; its figures mean little. */
  smoke: boolean;
}

export const BENCH_NAMES = ['ingest', 'store', 'detection', 'alarm-to-mail', 'api', 'soak', 'service-soak', 'estate', 'firmware'] as const;
export type BenchName = (typeof BENCH_NAMES)[number];

export type BenchScenario = (opts: BenchOptions) => Promise<BenchResult>;

/** A row with no reference or target: a figure shown for information. */
export function infoRow(figure: string, value: number, unit: string): BenchRow {
  return { figure, value, unit, reference: null, referenceValue: null, ratio: null, target: null, met: null };
}

/** A latency figure judged against an upper bound in ms; `complete` is false when some samples never arrived. */
export function ceilingRow(figure: string, valueMs: number, ceilingMs: number, complete: boolean): BenchRow {
  return {
    figure,
    value: valueMs,
    unit: 'ms',
    reference: 'target',
    referenceValue: ceilingMs,
    ratio: valueMs / ceilingMs,
    target: `≤ ${ceilingMs} ms`,
    met: complete && valueMs <= ceilingMs,
  };
}

/**
 * A figure as a fraction of a ceiling measured in the same run (higher is better), judged against
 * a goal ratio such as 0.5× — or shown for information when `goal` is null.
 */
export function shareRow(figure: string, value: number, unit: string, ceiling: string, ceilingValue: number, goal: number | null): BenchRow {
  const ratio = ceilingValue > 0 ? value / ceilingValue : null;
  return {
    figure,
    value,
    unit,
    reference: ceiling,
    referenceValue: ceilingValue,
    ratio,
    target: goal === null ? null : `≥ ${goal}×`,
    met: goal === null ? null : ratio !== null && ratio >= goal,
  };
}
