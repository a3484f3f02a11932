import { availableParallelism } from 'node:os';
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: 'forks',
    // test files are independent: one fork per core (the default leaves one core idle on a 2-core machine)
    maxWorkers: availableParallelism(),
  },
});
