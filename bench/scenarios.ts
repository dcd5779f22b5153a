import type { BenchName, BenchScenario } from './benchTypes.js';

/**
 * Every scenario by name, in the order a full run takes them. Loaded on demand, so a child process
 * running one scenario (the soak above all, which measures memory) carries only that scenario's modules.
 */
export const SCENARIOS: Record<BenchName, () => Promise<BenchScenario>> = {
  ingest: async () => (await import('./ingest.bench.js')).run,
  store: async () => (await import('./store.bench.js')).run,
  detection: async () => (await import('./detection.bench.js')).run,
  'alarm-to-mail': async () => (await import('./alarmToMail.bench.js')).run,
  api: async () => (await import('./api.bench.js')).run,
  soak: async () => (await import('./soak.bench.js')).run,
  'service-soak': async () => (await import('./serviceSoak.bench.js')).run,
  estate: async () => (await import('./estate.bench.js')).run,
  firmware: async () => (await import('./firmware.bench.js')).run,
};
