import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    globalSetup: ['test/helpers/global-setup.ts'],
    testTimeout: 60_000,
    hookTimeout: 180_000,
    // Database-heavy suites share one server; two workers match the 2-core target machine.
    pool: 'forks',
    maxWorkers: 2,
  },
});
