import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    // Browser tests start Chromium; on a 2-core machine one file at a time keeps timings honest.
    fileParallelism: false,
    testTimeout: 30_000,
    reporters: ['default', 'json'],
    outputFile: { json: 'out/test-results.json' },
    hookTimeout: 60_000,
  },
});
