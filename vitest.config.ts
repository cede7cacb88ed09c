import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    // Files in one worker share its module cache rather than load the pipeline (the NLP
    // model, the store drivers) again each: about a third of the run. There is no global
    // state to leak; a test that changes the process (fake timers, a spy) restores it.
    isolate: false,
    // Three at a time on two cores: several files wait more than they compute (a Redis
    // outage of 60 s, processes starting), and the waiting overlaps the others' work.
    maxWorkers: 3,
    globalSetup: ['test/global-setup.ts'],
  },
});
