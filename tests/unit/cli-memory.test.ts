// `analyze` in bounded memory: the peak resident set of the CLI on two float WAVs of very different
// sizes. Reading in pieces means the peak may hold a fixed amount plus a small fraction of the file;
// a reader that holds the samples grows with the file (4 bytes of float32 become 8 of Float64 per
// sample at the very least). Peak RSS is Node's process.resourceUsage().maxRSS, in kilobytes
// (Node documentation, process.resourceUsage), written by a preload when the child exits.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { closeSync, openSync, readFileSync, writeFileSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { tempDir } from '../support/station.ts';

const CLI = fileURLToPath(new URL('../../cli/trimbench.ts', import.meta.url));
const RATE = 48000;
let files: ReturnType<typeof tempDir>;
let preload: string;

/** A mono 32-bit float WAV (RIFF/WAVE, format tag 3) of a 997 Hz tone, written a block at a time. */
function writeToneWav(path: string, samples: number): void {
  const fd = openSync(path, 'w');
  const header = Buffer.alloc(44);
  const dataBytes = samples * 4;
  header.write('RIFF', 0, 'ascii');
  header.writeUInt32LE(36 + dataBytes, 4);
  header.write('WAVEfmt ', 8, 'ascii');
  header.writeUInt32LE(16, 16);
  header.writeUInt16LE(3, 20); // IEEE float
  header.writeUInt16LE(1, 22);
  header.writeUInt32LE(RATE, 24);
  header.writeUInt32LE(RATE * 4, 28);
  header.writeUInt16LE(4, 32);
  header.writeUInt16LE(32, 34);
  header.write('data', 36, 'ascii');
  header.writeUInt32LE(dataBytes, 40);
  writeSync(fd, header);
  const block = new Float32Array(1 << 18);
  for (let start = 0; start < samples; start += block.length) {
    const n = Math.min(block.length, samples - start);
    for (let i = 0; i < n; i++) block[i] = 0.5 * Math.sin((2 * Math.PI * 997 * (start + i)) / RATE);
    writeSync(fd, new Uint8Array(block.buffer, 0, n * 4));
  }
  closeSync(fd);
}

function peakRssBytes(file: string): number {
  const out = join(files.path, 'rss.txt');
  const result = spawnSync(process.execPath, ['--import', pathToFileURL(preload).href, CLI, 'analyze', file, '--json'], {
    encoding: 'utf8',
    timeout: 120_000,
    env: { ...process.env, RSS_OUT: out },
  });
  expect(result.stderr).toBe('');
  expect(result.status).toBe(0);
  expect(JSON.parse(result.stdout).fundamental.frequencyHz).toBeCloseTo(997, 3);
  return Number(readFileSync(out, 'utf8')) * 1024;
}

beforeAll(() => {
  files = tempDir('trimbench-cli-memory-');
  preload = join(files.path, 'rss.mjs');
  writeFileSync(preload, "import { writeFileSync } from 'node:fs';\nprocess.on('exit', () => writeFileSync(process.env.RSS_OUT, String(process.resourceUsage().maxRSS)));\n");
});
afterAll(() => files.remove());

describe('analyze memory', () => {
  it('peaks at a fixed amount plus a small fraction of the file: 16 MB and 96 MB files differ by under 20 MB', () => {
    const small = join(files.path, 'small.wav');
    const large = join(files.path, 'large.wav');
    writeToneWav(small, 4_000_000); // 16 MB
    writeToneWav(large, 24_000_000); // 96 MB
    const growth = peakRssBytes(large) - peakRssBytes(small);
    // 80 MB more file; holding its samples as Float64 alone would add 160 MB (twice the difference),
    // so a quarter of the difference leaves room for the garbage collector's own slack.
    expect(growth).toBeLessThan(0.25 * 80e6);
  }, 180_000);
});
