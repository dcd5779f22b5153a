import { describe, expect, it } from 'vitest';
import { run as alarmToMail } from '../../bench/alarmToMail.bench.js';
import { run as api } from '../../bench/api.bench.js';
import type { BenchResult, BenchScenario } from '../../bench/benchTypes.js';
import { BENCH_NAMES } from '../../bench/benchTypes.js';
import { run as detection } from '../../bench/detection.bench.js';
import { run as firmware } from '../../bench/firmware.bench.js';
import { run as ingest } from '../../bench/ingest.bench.js';
import { SCENARIOS } from '../../bench/scenarios.js';
import { run as soak } from '../../bench/soak.bench.js';
import { run as serviceSoak } from '../../bench/serviceSoak.bench.js';
import { run as store } from '../../bench/store.bench.js';
import { run as estate } from '../../bench/estate.bench.js';

/**
 * Runs every benchmark scenario in its smoke mode, in-process, so the benches cannot rot. Only the
 * shape of each result is checked: no figure is a pass or fail here, and no timing is asserted.
 */
const scenarios: Array<[string, BenchScenario]> = [
  ['ingest', ingest],
  ['store', store],
  ['detection', detection],
  ['alarm-to-mail', alarmToMail],
  ['api', api],
  ['soak', soak],
  ['service-soak', serviceSoak],
  ['estate', estate],
  ['firmware', firmware],
];

function expectWellFormed(result: BenchResult, name: string): void {
  expect(result.name).toBe(name);
  expect(result.title.length).toBeGreaterThan(0);
  expect(result.rows.length).toBeGreaterThan(0);
  expect(result.notes.length).toBeGreaterThan(0);
  for (const row of result.rows) {
    expect(row.figure.length, 'figure').toBeGreaterThan(0);
    expect(Number.isFinite(row.value), `${row.figure} is a number`).toBe(true);
    expect(row.unit.length, `${row.figure} has a unit`).toBeGreaterThan(0);
    // A target always comes with a verdict, and a verdict only with a target.
    expect(row.met === null, `${row.figure}: met set exactly when a target is`).toBe(row.target === null);
  }
}

describe('benchmark scenarios, smoke mode', () => {
  it('the runner knows every scenario by name', () => {
    expect(Object.keys(SCENARIOS).sort()).toEqual([...BENCH_NAMES].sort());
    expect(scenarios.map(([name]) => name).sort()).toEqual([...BENCH_NAMES].sort());
  });

  for (const [name, scenario] of scenarios) {
    it(`${name} runs and reports well-formed rows`, async () => {
      const result = await scenario({ smoke: true });
      expectWellFormed(result, name);
      const counted = result.rows.find((r) => /measured$/.test(r.figure));
      if (counted) expect(counted.value, `${name} measured something`).toBeGreaterThan(0);
    }, 120_000);
  }
});
