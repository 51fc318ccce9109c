import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    // two test files at a time on 2 cores (the default would be one); the suite took 8 min in one worker
    maxWorkers: 2,
  },
});
