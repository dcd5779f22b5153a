import type { BenchResult, BenchRow } from '../benchTypes.js';

/** Numbers for people: grouped thousands, fewer decimals the larger the value. */
export function formatNumber(value: number | null): string {
  if (value === null) return '—';
  if (!Number.isFinite(value)) return String(value);
  const abs = Math.abs(value);
  if (Number.isInteger(value)) return value.toLocaleString('en-GB');
  const digits = abs >= 100 ? 0 : abs >= 10 ? 1 : abs >= 1 ? 2 : 3;
  return value.toLocaleString('en-GB', { minimumFractionDigits: digits, maximumFractionDigits: digits });
}

function formatRatio(ratio: number | null): string {
  if (ratio === null || !Number.isFinite(ratio)) return '—';
  return `${formatNumber(ratio)}×`;
}

function metText(met: boolean | null): string {
  return met === null ? '—' : met ? 'yes' : 'NO';
}

/** "Ceiling" is the reference measured in the same run (or a fixed limit for latency goals). */
const HEADERS = ['figure', 'value', 'ceiling / reference', 'ceiling value', 'ratio', 'goal', 'met'];

function cells(row: BenchRow): string[] {
  return [
    row.figure,
    `${formatNumber(row.value)} ${row.unit}`,
    row.reference ?? '—',
    row.referenceValue === null ? '—' : formatNumber(row.referenceValue),
    formatRatio(row.ratio),
    row.target ?? '—',
    metText(row.met),
  ];
}

/** A plain fixed-width table for the terminal. */
export function consoleTable(result: BenchResult): string {
  const rows = [HEADERS, ...result.rows.map(cells)];
  const widths = HEADERS.map((_, c) => Math.max(...rows.map((r) => r[c]!.length)));
  const line = (r: string[]) => r.map((cell, c) => cell.padEnd(widths[c]!)).join('  ').trimEnd();
  return [line(rows[0]!), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.slice(1).map(line)].join('\n');
}

const escapeCell = (text: string) => text.replace(/\|/g, '\\|');

export function markdownTable(result: BenchResult): string {
  const row = (r: string[]) => `| ${r.map(escapeCell).join(' | ')} |`;
  return [row(HEADERS), `|${HEADERS.map(() => '---').join('|')}|`, ...result.rows.map((r) => row(cells(r)))].join('\n');
}

/** Every row that has a target, for the summary at the top of the report. */
export function targetSummary(results: readonly BenchResult[]): string[] {
  return results.flatMap((result) =>
    result.rows
      .filter((r) => r.target !== null)
      .map((r) => `${metText(r.met)} — ${result.name}: ${r.figure} = ${formatNumber(r.value)} ${r.unit}${r.ratio !== null ? ` (${formatRatio(r.ratio)})` : ''}, target ${r.target}`),
  );
}
