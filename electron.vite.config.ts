import { resolve } from 'node:path';
import { defineConfig } from 'electron-vite';
import type { Plugin } from 'vite';

/**
 * In development only, the page may open the dev server's live-reload socket and take the inline
 * styles Vite's dev server injects for CSS modules; a build serves stylesheets as files.
 */
const allowDevServer: Plugin = {
  name: 'trimbench-dev-csp',
  apply: 'serve',
  transformIndexHtml: (html) =>
    html.replace("connect-src 'self';", "connect-src 'self' ws://localhost:*;").replace("style-src 'self';", "style-src 'self' 'unsafe-inline';"),
};

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
    plugins: [allowDevServer],
  },
});
