import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vitest/config';

const shared = { testTimeout: 30_000, hookTimeout: 60_000 };

export default defineConfig({
  test: {
    // Vitest's default in a run is one worker fewer than the cores: on a two-core machine that is one,
    // and the Node tests ran one file at a time. Browser tests stay one at a time (their project says so).
    maxWorkers: Math.max(2, availableParallelism() - 1),
    reporters: ['default', 'json'],
    outputFile: { json: 'out/test-results.json' },
    projects: [
      {
        // Node tests share nothing but the machine: two at a time use both cores.
        test: { ...shared, name: 'unit', include: ['tests/unit/**/*.test.ts'], sequence: { groupOrder: 1 } },
      },
      {
        // The built main bundle (out/main/index.js) run in Node against a stand-in for Electron.
        resolve: { alias: { electron: fileURLToPath(new URL('./tests/main/electron-stand-in.ts', import.meta.url)) } },
        test: { ...shared, name: 'main', include: ['tests/main/**/*.main.test.ts'], sequence: { groupOrder: 1 } },
      },
      {
        // Browser tests start Chromium and feed it audio in real time: one file at a time, after the
        // Node tests, so no reading waits on a core another test holds.
        test: { ...shared, name: 'e2e', include: ['tests/e2e/**/*.test.ts'], fileParallelism: false, sequence: { groupOrder: 2 } },
      },
    ],
  },
});
