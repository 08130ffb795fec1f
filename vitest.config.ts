import { defineConfig } from 'vitest/config';

// One config for every suite; scripts/test.mjs runs it after the type and lint gates.
export default defineConfig({
  test: {
    include: ['test/**/*.test.ts', 'server/**/*.test.ts'],
    exclude: ['node_modules/**', 'web/dist/**'],
    pool: 'forks',
    maxWorkers: 2,
    testTimeout: 60_000,
    hookTimeout: 120_000,
  },
});
