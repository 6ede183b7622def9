import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    // Worker-thread tests each start tfjs; keep files in separate forks but bounded to the machine.
    pool: 'forks',
    maxWorkers: 2,
  },
});
