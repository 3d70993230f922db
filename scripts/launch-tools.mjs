// What npm start and npm run package share: the Node they need, and electron-vite's command-line
// script (its package exports do not list its bin, so it is found beside its package.json).
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';

const require = createRequire(import.meta.url);

/** Stops with one line when this Node is older than the project's engines field allows (22.12). */
export function exitUnlessSupportedNode(purpose) {
  const [major, minor] = process.versions.node.split('.').map(Number);
  if (major < 22 || (major === 22 && minor < 12)) {
    console.error(`Trimbench needs Node 22.12 or newer ${purpose} (this is ${process.version}); see DEVELOPERS.md for a one-line way to get it.`);
    process.exit(1);
  }
}

export const electronViteCli = () => join(dirname(require.resolve('electron-vite/package.json')), 'bin', 'electron-vite.js');
