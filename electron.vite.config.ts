import { resolve } from 'node:path';
import { defineConfig } from 'electron-vite';

export default defineConfig({
  main: {
    build: {
      rollupOptions: { input: { index: resolve('electron/main/index.ts') } },
    },
  },
  preload: {
    build: {
      // A sandboxed preload must be CommonJS.
      rollupOptions: {
        input: { index: resolve('electron/preload/index.ts') },
        output: { format: 'cjs', entryFileNames: '[name].cjs' },
      },
    },
  },
  renderer: {
    root: 'renderer',
    build: {
      rollupOptions: { input: { index: resolve('renderer/index.html') } },
    },
    worker: { format: 'es' },
  },
});
