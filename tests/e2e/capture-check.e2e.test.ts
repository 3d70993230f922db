// `npm run -s capture-check` as a technician or a script would run it: a child process, one
// JSON object on stdout, one line on stderr when something is wrong.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { tone } from '../support/signals.ts';
import { tempDir } from '../support/station.ts';
import { encodePcm24 } from '../support/wav-files.ts';

const CLI = fileURLToPath(new URL('../harness/capture-check.ts', import.meta.url));
let files: ReturnType<typeof tempDir>;

function captureCheck(...args: string[]) {
  return spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: 90_000 });
}

beforeAll(() => {
  files = tempDir('trimbench-capture-check-test-');
});
afterAll(() => files.remove());

describe('capture-check', () => {
  it('reads a 24-bit, 48 kHz file of a 14 Hz trim tone through the live path', () => {
    // Construction: 14 Hz at −10 dBFS with H2 at −55 dBc and H3 at −62 dBc, 2 s (28 whole cycles).
    const rate = 48000;
    const samples = tone(2 * rate, rate, 14, 10 ** (-10 / 20), {
      partials: [
        { order: 2, levelDbc: -55, phaseDeg: 0 },
        { order: 3, levelDbc: -62, phaseDeg: 90 },
      ],
    });
    const file = join(files.path, 'trim-tone-24bit.wav');
    writeFileSync(file, encodePcm24(samples, rate));
    const run = captureCheck(file, '--json');
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
    const lines = run.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const result = JSON.parse(lines[0]);
    expect(Object.keys(result)).toEqual(['fundamental', 'harmonics', 'thdPercent', 'thdDb', 'flags']);
    expect(result.fundamental.frequencyHz).toBeCloseTo(14, 1);
    expect(Math.abs(result.fundamental.levelDbfs + 10)).toBeLessThan(0.5);
    const level = (order: number) => result.harmonics.find((h: { order: number }) => h.order === order).levelDbc;
    expect(Math.abs(level(2) + 55)).toBeLessThan(0.5);
    expect(Math.abs(level(3) + 62)).toBeLessThan(0.5);
    expect(result.flags).toEqual([]);
  });

  it('fails with one line naming the file when it is not a WAV file', () => {
    const file = join(files.path, 'notes.wav');
    writeFileSync(file, 'these are not samples');
    const run = captureCheck(file, '--json');
    expect(run.status).not.toBe(0);
    expect(run.stdout).toBe('');
    expect(run.stderr).toBe(`capture-check: ${file}: not a RIFF/WAVE file\n`);
  });

  it('fails with one line when the file holds only silence', () => {
    const file = join(files.path, 'silence.wav');
    writeFileSync(file, encodePcm24(new Float64Array(48000), 48000));
    const run = captureCheck(file, '--json');
    expect(run.status).not.toBe(0);
    expect(run.stdout).toBe('');
    expect(run.stderr).toBe(`capture-check: ${file}: no signal on channel 0\n`);
  });
});
