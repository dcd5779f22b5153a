#!/usr/bin/env node
// Lists the mutants a StrykerJS JSON report (mutation-testing-report-schema) says no test caught:
// Survived and NoCoverage, per file, with line, mutator, replacement and the source line as it is now.
// Usage: node bench/support/listSurvivors.mjs reports/mutation/<report>.json [path-substring]
import { readFileSync, existsSync } from 'node:fs';

const [reportPath, only] = process.argv.slice(2);
if (!reportPath) {
  console.error('usage: listSurvivors.mjs <report.json> [path-substring]');
  process.exit(2);
}
const report = JSON.parse(readFileSync(reportPath, 'utf8'));
const wanted = new Set(['Survived', 'NoCoverage']);
for (const [file, entry] of Object.entries(report.files).sort(([a], [b]) => a.localeCompare(b))) {
  if (only && !file.includes(only)) continue;
  const missed = entry.mutants.filter((m) => wanted.has(m.status)).sort((a, b) => a.location.start.line - b.location.start.line || a.location.start.column - b.location.start.column);
  const counts = Object.fromEntries([...wanted].map((s) => [s, missed.filter((m) => m.status === s).length]));
  console.log(`\n## ${file}: ${counts.Survived} survived, ${counts.NoCoverage} no coverage (of ${entry.mutants.length})`);
  // The report's own source is what was mutated; the file on disk may have changed since, so both are shown when they differ.
  const then = (entry.source ?? '').split('\n');
  const now = existsSync(file) ? readFileSync(file, 'utf8').split('\n') : [];
  for (const m of missed) {
    const line = m.location.start.line;
    const tag = m.status === 'NoCoverage' ? 'NOCOV' : 'SURV ';
    const replacement = (m.replacement ?? '').replace(/\s+/g, ' ').slice(0, 90);
    console.log(`${tag} L${line}:${m.location.start.column} ${m.mutatorName} -> ${replacement}`);
    const src = (then[line - 1] ?? '').trim();
    console.log(`      | ${src.slice(0, 150)}`);
    if (now.length && now[line - 1] !== then[line - 1]) console.log(`      | (now) ${(now[line - 1] ?? '').trim().slice(0, 140)}`);
  }
}
