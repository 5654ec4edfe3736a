import { defineConfig } from 'vitest/config';

// Browser end-to-end tests: run after `npm run build`, one file at a time.
export default defineConfig({
  test: {
    include: ['test/browser/**/*.e2e.ts'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    fileParallelism: false,
    pool: 'forks',
  },
});
