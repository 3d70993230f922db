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
import { encodeWavFloat32 } from '../../shared/audio/wav.ts';

const CLI = fileURLToPath(new URL('../harness/capture-check.ts', import.meta.url));
const ANALYZE = fileURLToPath(new URL('../../cli/trimbench.ts', import.meta.url));
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

  it('agrees with the offline analyze command within 0.1 dB on the same file', () => {
    // 997 Hz at −8 dBFS with H2 −58 dBc and H3 −73 dBc: 997 whole cycles in 1 s at 44.1 kHz, so the
    // fake device loops it without a seam and plays it at its own rate.
    const rate = 44100;
    const samples = tone(rate, rate, 997, 10 ** (-8 / 20), {
      partials: [
        { order: 2, levelDbc: -58, phaseDeg: 30 },
        { order: 3, levelDbc: -73, phaseDeg: 60 },
      ],
    });
    const file = join(files.path, 'agreement.wav');
    writeFileSync(file, encodeWavFloat32([samples, samples], rate));
    const live = JSON.parse(captureCheck(file, '--json').stdout);
    const offline = JSON.parse(spawnSync(process.execPath, [ANALYZE, 'analyze', file, '--json'], { encoding: 'utf8' }).stdout);
    expect(Math.abs(live.fundamental.levelDbfs - offline.fundamental.levelDbfs)).toBeLessThan(0.1);
    for (const order of [2, 3]) {
      const level = (result: { harmonics: { order: number; levelDbc: number }[] }) => result.harmonics.find((h) => h.order === order)!.levelDbc;
      expect(Math.abs(level(live) - level(offline))).toBeLessThan(0.1);
    }
    expect(Math.abs(live.thdDb - offline.thdDb)).toBeLessThan(0.1);
  });

  it('--mains tells hum from a harmonic beside it: 60 Hz hum beside a 14 Hz tone’s H4 at 56 Hz', () => {
    // Construction: 14 Hz at −10 dBFS with H3 at −60 dBc and no H4; 60 Hz hum at −70 dBc. 2 s holds
    // whole cycles of both, so the loop has no seam.
    const rate = 44100;
    const samples = tone(2 * rate, rate, 14, 10 ** (-10 / 20), { partials: [{ order: 3, levelDbc: -60, phaseDeg: 0 }] });
    const hum = tone(2 * rate, rate, 60, 10 ** ((-10 - 70) / 20));
    const file = join(files.path, 'hum-60.wav');
    writeFileSync(file, encodeWavFloat32([samples.map((x, i) => x + hum[i])], rate));
    const h4 = (result: { harmonics: { order: number; levelDbc: number }[] }) => result.harmonics.find((h) => h.order === 4)!.levelDbc;
    const right = JSON.parse(captureCheck(file, '--mains', '60', '--json').stdout);
    expect(h4(right)).toBeLessThan(-100);
    expect(Math.abs(right.harmonics.find((h: { order: number }) => h.order === 3).levelDbc + 60)).toBeLessThan(0.5);
    // Told the wrong mains, the hum 3 bins from H4 is not modelled and leaks into it.
    const wrong = JSON.parse(captureCheck(file, '--mains', '50', '--json').stdout);
    expect(h4(wrong)).toBeGreaterThan(h4(right) + 20);
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
