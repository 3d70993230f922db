// npm start: makes sure the Electron runtime is present (it is downloaded on first use, not at
// install), then builds and opens Trimbench. Without a network the download cannot happen:
// say so in one line instead of a stack trace.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { electronViteCli, exitUnlessSupportedNode } from './launch-tools.mjs';

const require = createRequire(import.meta.url);
const electronDir = dirname(require.resolve('electron/package.json'));

function electronBinaryPresent() {
  const pathFile = join(electronDir, 'path.txt');
  if (!existsSync(pathFile)) return false;
  return existsSync(join(electronDir, 'dist', readFileSync(pathFile, 'utf8').trim()));
}

exitUnlessSupportedNode('to run');

if (!electronBinaryPresent()) {
  console.log('Fetching the Electron runtime (first start only)…');
  const install = spawnSync(process.execPath, [join(electronDir, 'install.js')], {
    stdio: ['ignore', 'ignore', 'pipe'],
    timeout: 10 * 60 * 1000,
  });
  if (install.status !== 0 || !electronBinaryPresent()) {
    const lines = String(install.stderr ?? '').split('\n').map((line) => line.trim());
    const said = lines.find((line) => /error/i.test(line) && !line.startsWith('at ')) ?? lines.find(Boolean) ?? 'no reason given';
    // Undici says only "fetch failed" when no connection could be made at all.
    const cause = /fetch failed|ENOTFOUND|EAI_AGAIN|ECONNREFUSED|ETIMEDOUT|ENETUNREACH/i.test(said) ? `no connection to the download server: ${said}` : said;
    console.error(
      `Trimbench cannot start: the Electron runtime is not installed and could not be downloaded (${cause.slice(0, 200)}). ` +
        'Run `npm start` again with internet access; `npm run build` and `npm test` work without it.',
    );
    process.exit(1);
  }
}

const preview = spawn(process.execPath, [electronViteCli(), 'preview'], { stdio: 'inherit' });
preview.on('exit', (code) => process.exit(code ?? 1));
