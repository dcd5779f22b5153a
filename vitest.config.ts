import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    environment: 'node',
    // Lists tests skipped because the machine forbids mount/chattr at the end of the run (tests/helpers/machineSkip.ts).
    globalSetup: ['tests/helpers/machineSkipSummary.ts'],
    // Real SQLite files, pseudo-terminals and SMTP servers: keep parallelism modest on a 2-core box.
    pool: 'forks',
    maxWorkers: 2,
    testTimeout: 30_000,
    hookTimeout: 30_000,
    // In CI also a JSON summary, from which .ci/run prints one plain "N passed, N failed" line.
    reporters: process.env.CI ? ['default', ['json', { outputFile: 'tests/.output/vitest-results.json' }]] : ['default'],
  },
});
