// npm run package: builds Trimbench and makes its installable packages with electron-builder, as
// electron-builder.json says (AppImage and deb on Linux, NSIS on Windows, dmg on macOS; the host's
// own by default, or the platforms given: `npm run package -- --linux`). electron-builder
// downloads the Electron build for each target and the native modules' prebuilt binaries: without
// a network that cannot happen, and the answer is one line naming why, never a stack.
import { spawn, spawnSync } from 'node:child_process';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { electronViteCli, exitUnlessSupportedNode } from './launch-tools.mjs';
import { packagingFailure } from './packaging-failure.mjs';

const require = createRequire(import.meta.url);

exitUnlessSupportedNode('to be packaged');

const build = spawnSync(process.execPath, [electronViteCli(), 'build'], { stdio: 'inherit' });
if (build.status !== 0) process.exit(build.status ?? 1);

const electronVersion = require('electron/package.json').version;
const builderCli = join(dirname(require.resolve('electron-builder/package.json')), 'cli.js');
const builder = spawn(process.execPath, [builderCli, '--config', 'electron-builder.json', '--publish', 'never', ...process.argv.slice(2)], {
  stdio: ['ignore', 'pipe', 'pipe'],
});
// Its progress lines ("  • …") go to the terminal as they come (packaging takes minutes); anything
// else (an error and its stack) is held back, to be said in one line when it is a failed download or
// shown whole otherwise.
let output = '';
let pending = '';
builder.stdout.on('data', (chunk) => {
  output = (output + chunk).slice(-500_000);
  const lines = (pending + chunk).split('\n');
  pending = lines.pop() ?? '';
  for (const line of lines) if (/^\s*•/.test(line)) process.stdout.write(`${line}\n`);
});
builder.stderr.on('data', (chunk) => {
  output = (output + chunk).slice(-500_000);
});
builder.on('exit', (code) => {
  if (code === 0) {
    console.log('Packages are in dist/.');
    process.exit(0);
  }
  const oneLine = packagingFailure(output, electronVersion);
  if (oneLine) console.error(oneLine);
  else {
    process.stderr.write(output);
    console.error(`electron-builder stopped (exit status ${code}); what it said is above.`);
  }
  process.exit(code || 1);
});
