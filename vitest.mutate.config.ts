import { defineConfig } from 'vitest/config';

/**
 * The tests StrykerJS runs against each mutant (npm run mutate): the unit tests of the mutated folders.
 * Stryker runs vitest in worker threads, where serialport's native addon aborts the process, so the
 * ingest, fault, end-to-end and browser suites stay out; they test the shell, which is not mutated.
 * privateFiles sets the process umask, which worker threads refuse (the run stops in its first pass).
 */
export default defineConfig({
  test: {
    include: [
      'tests/protocol/**/*.test.ts',
      'tests/classify/**/*.test.ts',
      'tests/alarms/**/*.test.ts',
      'tests/site/**/*.test.ts',
      'tests/reference/**/*.test.ts',
      'tests/notify/**/*.test.ts',
      'tests/store/**/*.test.ts',
      'tests/daemon/monitorCore*.test.ts',
    ],
    exclude: ['tests/store/privateFiles.test.ts'],
    environment: 'node',
    testTimeout: 30_000,
    hookTimeout: 30_000,
  },
});
