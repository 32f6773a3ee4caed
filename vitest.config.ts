import { defineConfig } from 'vitest/config';

/**
 * Two projects: `unit` (everything that needs no broker) and `kafka` (files named `*.kafka.test.ts`,
 * run against a real broker that `test/support/kafka-setup.ts` starts only when such a file is queued).
 */
export default defineConfig({
  test: {
    setupFiles: ['test/support/setup.ts'],
    // Short, so that a hung await fails fast; long statistical tests state their own timeout.
    testTimeout: 30_000,
    hookTimeout: 120_000,
    pool: 'forks',
    projects: [
      {
        extends: true,
        test: { name: 'unit', include: ['test/**/*.test.ts'], exclude: ['test/**/*.kafka.test.ts'] },
      },
      {
        extends: true,
        test: {
          name: 'kafka',
          include: ['test/**/*.kafka.test.ts'],
          globalSetup: ['test/support/kafka-setup.ts'],
          testTimeout: 120_000,
        },
      },
    ],
  },
});
