import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    // Worker-thread tests spawn their own pools; keep vitest's own parallelism modest on 2 cores.
    maxWorkers: 2,
  },
});
