import { run as alarmToMail } from './alarmToMail.bench.js';
import { run as api } from './api.bench.js';
import type { BenchName, BenchScenario } from './benchTypes.js';
import { run as detection } from './detection.bench.js';
import { run as ingest } from './ingest.bench.js';
import { run as soak } from './soak.bench.js';
import { run as store } from './store.bench.js';

/** Every scenario by name, in the order a full run takes them. */
export const SCENARIOS: Record<BenchName, BenchScenario> = {
  ingest,
  store,
  detection,
  'alarm-to-mail': alarmToMail,
  api,
  soak,
};
