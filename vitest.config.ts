import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    // Three at a time on two cores: several files wait more than they compute (a Redis
    // outage of 60 s, processes starting), and the waiting overlaps the others' work.
    maxWorkers: 3,
    globalSetup: ['test/global-setup.ts'],
  },
});
