import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    // Integration and end-to-end tests start real processes and talk to a real
    // Redis; generous per-test limits keep a loaded 2-core CI machine green.
    testTimeout: 120_000,
    hookTimeout: 60_000,
    pool: 'forks',
    maxWorkers: 2,
    reporters: ['default'],
  },
});
