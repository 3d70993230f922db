// The command line as a person or a script runs it: a child process, stdout and stderr kept apart.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { cpSync, readFileSync, writeFileSync } from 'node:fs';
import Database from 'better-sqlite3';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { decodeWav, encodeWavFloat32 } from '../../shared/audio/wav.ts';
import { logSweep } from '../../shared/dsp/log-sweep.ts';
import { dispatch } from '../../electron/services/handlers.ts';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { noCaller, onPhasorLine, openTestStation, readingWithThd, STEADY_LIVE, tempDir, startUnit, withAllHarmonics } from '../support/station.ts';
import { encodePcm24 } from '../support/wav-files.ts';
import { gaussian, seededRandom } from '../support/random.ts';
import { tone } from '../support/signals.ts';
import { scopeCsvText } from '../support/scope-csv-text.ts';
import { scopeCapture, settlingFromFormula, squareWaveResponse, textbookOvershoot, textbookRingHz } from '../support/step-response.ts';
import { filtered, magnitude, phaseDeg, rcLowPass } from '../support/analogue-filters.ts';

const CLI = fileURLToPath(new URL('../../cli/trimbench.ts', import.meta.url));
const run = (...args: string[]) => spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: 60_000 });
let files: ReturnType<typeof tempDir>;

beforeAll(() => {
  files = tempDir('trimbench-cli-');
});
afterAll(() => files.remove());

describe('analyze', () => {
  it('prints one JSON object whose numbers match the construction of the file', () => {
    // 997 Hz at −3 dBFS with H2 −66 dBc and H3 −80 dBc, in a stereo 24-bit file on the right channel.
    const rate = 96000;
    const right = tone(rate * 2, rate, 997, 10 ** (-3 / 20), {
      partials: [
        { order: 2, levelDbc: -66, phaseDeg: 20 },
        { order: 3, levelDbc: -80, phaseDeg: -40 },
      ],
    });
    const file = join(files.path, 'unit-997.wav');
    writeFileSync(file, encodeWavFloat32([new Float64Array(right.length), right], rate));
    const result = run('analyze', file, '--channel', '1', '--json');
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const lines = result.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const json = JSON.parse(lines[0]);
    for (const key of ['file', 'sampleRateHz', 'channel', 'fundamental', 'harmonics', 'thdPercent', 'thdDb', 'thdnPercent', 'thdnDb', 'sinadDb', 'noiseDbfs', 'noiseAWeightedDbfs', 'hum', 'flags']) {
      expect(json).toHaveProperty(key);
    }
    expect(json.sampleRateHz).toBe(rate);
    expect(json.channel).toBe(1);
    expect(json.fundamental.frequencyHz).toBeCloseTo(997, 4);
    expect(Math.abs(json.fundamental.levelDbfs + 3)).toBeLessThan(0.02);
    const h = (order: number) => json.harmonics.find((x: { order: number }) => x.order === order);
    expect(Math.abs(h(2).levelDbc + 66)).toBeLessThan(0.05);
    expect(Math.abs(h(3).levelDbc + 80)).toBeLessThan(0.05);
    // THD = √(H2² + H3²) over the fundamental.
    expect(Math.abs(json.thdDb - 20 * Math.log10(Math.hypot(10 ** (-66 / 20), 10 ** (-80 / 20))))).toBeLessThan(0.05);
    expect(json.hum).toBeNull();
    expect(json.flags).toEqual([]);
  });

  it('reads 24-bit PCM and prints a readable table without --json', () => {
    const file = join(files.path, 'tone-24.wav');
    writeFileSync(file, encodePcm24(tone(48000, 48000, 1000, 0.5), 48000));
    const result = run('analyze', file);
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/fundamental\s+1000\.0000 Hz\s+-6\.02\d dBFS/);
    expect(result.stdout).toMatch(/H10/);
  });

  it.each([
    ['a missing file', ['missing.wav'], /missing\.wav: cannot be read \(ENOENT\)/],
    ['a text file', ['notes.wav'], /notes\.wav: not a RIFF\/WAVE file/],
    ['a truncated file', ['truncated.wav'], /truncated\.wav: data chunk is truncated/],
    ['a channel that does not exist', ['tone-24.wav', '--channel', '3'], /has 1 channel\(s\); --channel 3 does not exist/],
    ['a bad band', ['tone-24.wav', '--band', '20k'], /--band must be LO-HI/],
    ['bad mains', ['tone-24.wav', '--mains', '55'], /--mains must be 50 or 60/],
    ['an unknown option', ['tone-24.wav', '--window', 'hann'], /Unknown option '--window'/],
  ])('fails on %s with one line on stderr and nothing on stdout', (_what, args, message) => {
    writeFileSync(join(files.path, 'notes.wav'), 'these are notes about the unit, not audio samples');
    const whole = encodePcm24(tone(48000, 48000, 1000, 0.5), 48000);
    writeFileSync(join(files.path, 'truncated.wav'), whole.subarray(0, 20000));
    const [name, ...rest] = args;
    const result = run('analyze', join(files.path, name), ...rest);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(message);
  });
});

describe('analyze refuses and flags', () => {
  it('refuses a float WAV holding a NaN with one line and a non-zero status', () => {
    const samples = tone(48000, 48000, 1000, 0.5);
    samples[12345] = Number.NaN;
    const file = join(files.path, 'nan.wav');
    writeFileSync(file, encodeWavFloat32([samples], 48000));
    const result = run('analyze', file, '--json');
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/non-finite sample .* at sample 12345/);
  });

  it('flags H3 of a 20 Hz tone on 60 Hz mains as mains-coincident, in JSON and in the table', () => {
    // 20 Hz with H3 at −70 dBc plus 60 Hz hum at −62 dBc: 20n Hz is a multiple of 60 Hz for n = 3, 6, 9.
    const rate = 48000;
    const x = tone(rate * 4, rate, 20, 0.5, { partials: [{ order: 3, levelDbc: -70, phaseDeg: 0 }] });
    const hum = tone(rate * 4, rate, 60, 0.5 * 10 ** (-62 / 20));
    const file = join(files.path, 'twenty.wav');
    writeFileSync(file, encodeWavFloat32([x.map((v, i) => v + hum[i])], rate));
    const json = JSON.parse(run('analyze', file, '--mains', '60', '--json').stdout);
    expect(json.flags).toContain('mains-coincident');
    expect(json.mainsCoincidentOrders).toEqual([3, 6, 9]);
    expect(run('analyze', file, '--mains', '60').stdout).toMatch(/mains-coincident: H3, H6, H9/);
  });
});

describe('help', () => {
  for (const word of ['--help', '-h', 'help']) {
    it(`${word} prints the usage and exits 0`, () => {
      const result = run(word);
      expect(result.status).toBe(0);
      expect(result.stdout).toMatch(/^usage:/);
      expect(result.stdout).toMatch(/trimbench procedure check FILE\.json/);
      expect(result.stderr).toBe('');
    });
  }
});

describe('plan', () => {
  it('prints the planned frequency and why', () => {
    const result = run('plan', '--target', '14', '--rate', '48000', '--mains', '50');
    expect(result.status).toBe(0);
    const [frequency, reason] = result.stdout.trim().split('\n');
    expect(Math.abs(Number(frequency.replace(' Hz', '')) - 14)).toBeLessThan(1);
    expect(reason).toMatch(/whole cycles/);
    const json = JSON.parse(run('plan', '--target', '14', '--rate', '48000', '--json').stdout);
    expect(json.frequencyHz).toBeCloseTo((json.cycles * 48000) / json.frameSize, 9);
  });

  it('needs --target and --rate', () => {
    const result = run('plan', '--target', '14');
    expect(result.status).toBe(1);
    expect(result.stderr).toMatch(/plan needs --target and --rate/);
  });
});

describe('fit', () => {
  // Trim points built from a known null: a residual perpendicular to the slope, so the null sits
  // at 5.2 turns with a depth of −72 dBc by construction.
  function csvFor(positions: number[], withPhase = true): string {
    const depth = 10 ** (-72 / 20);
    const slope = 0.002;
    const rows = positions.map((p) => {
      const re = -depth * Math.sin(0.7) + slope * (p - 5.2) * Math.cos(0.7);
      const im = depth * Math.cos(0.7) + slope * (p - 5.2) * Math.sin(0.7);
      const level = 20 * Math.log10(Math.hypot(re, im));
      const phase = (Math.atan2(im, re) * 180) / Math.PI;
      return withPhase ? `${p},${level},${phase},-12,-120` : `${p},${level}`;
    });
    return `${withPhase ? 'position,level_dbc,phase_deg,gain_db,lf_dbfs' : 'position,level_dbc'}\n${rows.join('\n')}\n`;
  }

  it('prints one JSON object with the null, the side, the next and recommended positions', () => {
    const file = join(files.path, 'trim.csv');
    writeFileSync(file, csvFor([0, 1, 2.5]));
    const result = run('fit', file, '--json');
    expect(result.stderr).toBe('');
    const json = JSON.parse(result.stdout);
    expect(Object.keys(json)).toEqual([
      'model',
      'nullPosition',
      'nullPositionPlusMinus',
      'nullLevelDbc',
      'bracketed',
      'side',
      'nextPosition',
      'recommendedPosition',
      'warnings',
      'fitProblem',
    ]);
    expect(json.model).toBe('phasor');
    expect(json.nullPosition).toBeCloseTo(5.2, 4);
    expect(json.nullLevelDbc).toBeCloseTo(-72, 2);
    expect(json.bracketed).toBe(false);
    expect(json.side).toBe('short-of-null');
    // Three points all turns short of the null: not yet safe to recommend a setting (issue 7).
    expect(json.recommendedPosition).toBeNull();
    expect(json.fitProblem).toBeNull();
    expect(json.warnings).toEqual([]);
  });

  it('uses the magnitude model without phases and honours --margin-db', () => {
    const file = join(files.path, 'trim-magnitude.csv');
    writeFileSync(file, csvFor([0, 2, 4, 5, 6], false));
    const one = JSON.parse(run('fit', file, '--json').stdout);
    const three = JSON.parse(run('fit', file, '--json', '--margin-db', '3').stdout);
    expect(one.model).toBe('magnitude');
    expect(Math.abs(one.nullPosition - 5.2)).toBeLessThan(0.02);
    expect(one.side).toBe('past-null');
    expect(one.warnings).toContain('past-null');
    expect(three.recommendedPosition).toBeLessThan(one.recommendedPosition);
  });

  it.each([
    ['a bad number', 'position,level_dbc\n0,-40\n1,abc\n', /line 3, column 2 \(level_dbc\): “abc” is not a number/],
    // ECMA-262 StringToNumber (what Number() does) reads hex, exponents, "Infinity" and blanks;
    // none is a plain decimal as a trim sheet holds, and 1e308 overflows the fit's squares.
    ['a hex position', 'position,level_dbc\n0,-40\n0x10,-45\n2,-50\n', /line 3, column 1 \(position\): “0x10” is not a number; write a plain decimal/],
    ['an exponent', 'position,level_dbc\n0,-40\n1,-45\n2,1e308\n', /line 4, column 2 \(level_dbc\): “1e308” is not a number/],
    ['Infinity', 'position,level_dbc,phase_deg\n0,-40,10\n1,-45,Infinity\n2,-50,30\n', /line 3, column 3 \(phase_deg\): “Infinity” is not a number/],
    ['NaN', 'position,level_dbc\n0,-40\nNaN,-45\n2,-50\n', /line 3, column 1 \(position\): “NaN” is not a number/],
    ['an empty level', 'position,level_dbc\n0,-40\n1, \n2,-50\n', /line 3, column 2 \(level_dbc\) is empty/],
    // A plain decimal of 301 digits is 1e300: finite in IEEE 754, but no trimmer position.
    ['a position of 301 digits', `position,level_dbc\n0,-40\n1,-45\n1${'0'.repeat(300)},-50\n`, /line 4, column 1 \(position\): 1000.*… lies outside/],
    ['a missing column', 'position,phase_deg\n0,10\n1,20\n', /line 1: the header has no “level_dbc” column/],
    ['a short row', 'position,level_dbc,phase_deg\n0,-40,10\n1,-42\n', /line 3: expected 3 fields, found 2/],
    ['one point', 'position,level_dbc\n0,-40\n', /only one trim point; the fit needs at least two/],
    ['two points without phase', 'position,level_dbc\n0,-40\n1,-42\n', /record a third point/],
  ])('fails on %s with the line number and the problem', (_what, text, message) => {
    const file = join(files.path, 'broken.csv');
    writeFileSync(file, text);
    const result = run('fit', file, '--json');
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(message);
  });

  it.each([['--step', '0x10'], ['--margin-db', '3e0'], ['--limit-dbc', '-Infinity']])('refuses %s %s: options are plain decimals too', (option, value) => {
    const file = join(files.path, 'trim-options.csv');
    writeFileSync(file, csvFor([0, 1, 2.5]));
    const result = run('fit', file, `${option}=${value}`);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(new RegExp(`${option} must be .*plain decimal`));
  });
});

describe('analyze --input-dbu-at-0dbfs', () => {
  // 997 Hz at −20 dBFS, 50 Hz hum at −60 dBFS and white noise of σ = 1e-4, so on an input where
  // +18 dBu reads 0 dBFS the tone is −20 + 18 = −2 dBu and the hum −42 dBu (dBFS is relative to
  // full scale, so a calibration adds its dBu at 0 dBFS to every level and noise figure).
  const rate = 48000;
  const sigma = 1e-4;
  function writeCalibrationWav(): string {
    const length = rate * 4;
    const x = tone(length, rate, 997, 10 ** (-20 / 20));
    const hum = tone(length, rate, 50, 10 ** (-60 / 20));
    const normal = gaussian(seededRandom(42));
    const file = join(files.path, 'calibrated.wav');
    writeFileSync(file, encodeWavFloat32([x.map((v, i) => v + hum[i] + sigma * normal())], rate));
    return file;
  }

  it('adds levelDbu, noiseDbu, noiseAWeightedDbu and hum.levelDbu; they are absent without the option', () => {
    const file = writeCalibrationWav();
    const calibrated = run('analyze', file, '--input-dbu-at-0dbfs', '18', '--json');
    expect(calibrated.stderr).toBe('');
    expect(calibrated.status).toBe(0);
    const json = JSON.parse(calibrated.stdout);
    expect(Math.abs(json.fundamental.levelDbu - (-20 + 18))).toBeLessThan(0.02);
    expect(Math.abs(json.hum.levelDbu - (-60 + 18))).toBeLessThan(0.2);
    // White noise of variance σ² over 20 Hz–20 kHz, referred to a full-scale sine's mean square
    // of 0.5 (AES17): 10·log10(σ² · 19 980 / 24 000 / 0.5) dBFS; about 150 000 bins in the band
    // make 0.2 dB several standard deviations.
    const noiseDbfs = 10 * Math.log10((sigma * sigma * (20000 - 20)) / (rate / 2) / 0.5);
    expect(Math.abs(json.noiseDbu - (noiseDbfs + 18))).toBeLessThan(0.2);
    expect(json.noiseAWeightedDbu - json.noiseAWeightedDbfs).toBeCloseTo(18, 9);
    // A-weighting of white noise over this band reads about 2 dB under the flat figure (the
    // integral of IEC 61672-1's curve, see dbu.test.ts); the point here is that it is in dBu too.
    expect(json.noiseAWeightedDbu).toBeLessThan(json.noiseDbu);

    const plain = JSON.parse(run('analyze', file, '--json').stdout);
    expect(plain.fundamental).not.toHaveProperty('levelDbu');
    expect(plain).not.toHaveProperty('noiseDbu');
    expect(plain).not.toHaveProperty('noiseAWeightedDbu');
    expect(plain.hum).not.toBeNull();
    expect(plain.hum).not.toHaveProperty('levelDbu');
    expect(plain.fundamental.levelDbfs).toBe(json.fundamental.levelDbfs);
  });

  it('shows dBu beside dBFS in the table', () => {
    const file = writeCalibrationWav();
    const table = run('analyze', file, '--input-dbu-at-0dbfs', '18').stdout;
    expect(table).toMatch(/calibration\s+input 18 dBu at 0 dBFS/);
    const fundamental = /fundamental\s+997\.\d+ Hz\s+(-\d+\.\d{3}) dBFS \((-\d+\.\d{3}) dBu\)/.exec(table);
    expect(fundamental).not.toBeNull();
    expect(Math.abs(Number(fundamental![2]) - (-20 + 18))).toBeLessThan(0.02);
    expect(Number(fundamental![2]) - Number(fundamental![1])).toBeCloseTo(18, 2);
    expect(table).toMatch(/noise\s+-?\d+\.\d\d dBFS \(-\d+\.\d\d dBu\)\s+A-weighted -?\d+\.\d\d dBFS \(-\d+\.\d\d dBu\)/);
    expect(table).toMatch(/hum\s+50\.\d+ Hz -60\.\d\d dBFS \(-4[12]\.\d\d dBu\)/);
    expect(run('analyze', file).stdout).not.toMatch(/dBu/);
  });

  it.each([['1e1'], ['abc'], ['99'], ['-41'], ['0x10'], ['']])('refuses --input-dbu-at-0dbfs “%s”, naming the option', (value) => {
    const file = join(files.path, 'tone-level.wav');
    writeFileSync(file, encodePcm24(tone(48000, 48000, 1000, 0.5), 48000));
    const result = run('analyze', file, `--input-dbu-at-0dbfs=${value}`);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/--input-dbu-at-0dbfs must be a level in dBu from -40 to 40 \(a plain decimal\)/);
  });
});

describe('internal errors', () => {
  // A bug is forced from outside: a preloaded module makes the sample scan throw a plain Error,
  // which no input check anticipates (Node's --import runs an ES module before the entry point).
  const breakScan = `data:text/javascript,${encodeURIComponent('Float64Array.prototype.findIndex = function () { throw new Error("scan exploded."); };')}`;
  const runBroken = (env: NodeJS.ProcessEnv, ...args: string[]) =>
    spawnSync(process.execPath, ['--import', breakScan, CLI, ...args], { encoding: 'utf8', timeout: 60_000, env: { ...process.env, ...env } });

  it('prints one short line and the stack only with TRIMBENCH_DEBUG=1', () => {
    const file = join(files.path, 'tone-internal.wav');
    writeFileSync(file, encodePcm24(tone(48000, 48000, 1000, 0.5), 48000));
    const quiet = runBroken({ TRIMBENCH_DEBUG: '' }, 'analyze', file);
    expect(quiet.status).toBe(2);
    expect(quiet.stdout).toBe('');
    expect(quiet.stderr).toBe('trimbench analyze: internal error: scan exploded. Run again with TRIMBENCH_DEBUG=1 for details.\n');
    const debug = runBroken({ TRIMBENCH_DEBUG: '1' }, 'analyze', file);
    expect(debug.status).toBe(2);
    const lines = debug.stderr.trim().split('\n');
    expect(lines[0]).toBe('trimbench analyze: internal error: scan exploded. Run again with TRIMBENCH_DEBUG=1 for details.');
    expect(lines.length).toBeGreaterThan(2);
    expect(debug.stderr).toMatch(/\n\s+at /);
  });
});

describe('procedure check', () => {
  // Hand-written files; what counts as a problem is issue 10's rule for procedure files.
  const good = JSON.stringify({
    schemaVersion: 2,
    code: 'TX1-CHECK',
    revision: 'A',
    title: 'TX-1 line driver check',
    invented: true,
    model: { code: 'TX-1', name: 'TX-1 line driver', maker: 'Test Maker (invented)', channels: 1 },
    serial: { pattern: '^TX1-[0-9]{3}$', example: 'TX1-001' },
    requiresCalibration: false,
    steps: [
      { id: 'safety', title: 'Safety', kind: 'notice', instructions: ['Mute the monitors.'], acknowledgement: 'Monitors are muted.' },
      {
        id: 'thd-1khz',
        title: 'THD at 1 kHz',
        kind: 'distortion',
        instructions: ['The generator plays 1 kHz.'],
        frequencyHz: 1000,
        level: { value: -12, unit: 'dBFS' },
        limits: { thdDb: { high: -60, unit: 'dB' } },
        onFail: 'stop',
      },
    ],
  });

  it('a good file prints a one-line summary (code, revision, model, steps) and exits 0', () => {
    const file = join(files.path, 'tx1.json');
    writeFileSync(file, good);
    const result = run('procedure', 'check', file);
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const lines = result.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/TX1-CHECK revision A, TX-1 .*2 steps: notice, distortion/);
  });

  it('the demo resource file passes', () => {
    const result = run('procedure', 'check', fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)));
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/MG20-LF-TRIM revision E/);
  });

  it('a bad file prints every problem on its own line, path first, and exits non-zero', () => {
    // Two problems written in: a limit bound as text, and an onFail that is neither stop nor continue.
    const bad = good.replace('"high":-60', '"high":"-60"').replace('"onFail":"stop"', '"onFail":"skip"');
    expect(bad).not.toBe(good);
    const file = join(files.path, 'tx1-bad.json');
    writeFileSync(file, bad);
    const result = run('procedure', 'check', file);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    const lines = result.stderr.trim().split('\n');
    expect(lines).toEqual([
      expect.stringMatching(/^steps\[1\]\.limits\.thdDb\.high: expected a number/),
      expect.stringMatching(/^steps\[1\]\.onFail: /),
      expect.stringMatching(/tx1-bad\.json: 2 problems/),
    ]);
  });

  it('a JSON syntax error names its line and column (RFC 8259: a comma may not follow the last member)', () => {
    const file = join(files.path, 'tx1-comma.json');
    writeFileSync(file, '{\n  "schemaVersion": 2,\n}\n');
    const result = run('procedure', 'check', file);
    expect(result.status).toBe(1);
    expect(result.stderr).toMatch(/^line 3, column 1: not valid JSON/);
  });

  it.each([
    ['a missing file', ['check', 'missing.json'], /missing\.json: cannot be read \(ENOENT\)/],
    ['no action', [], /procedure needs an action/],
    ['an unknown action', ['import', 'x.json'], /unknown action “import”/],
  ])('fails on %s with a message and status 1', (_what, args, message) => {
    const rest = args.map((a) => (a.endsWith('.json') ? join(files.path, a) : a));
    const result = run('procedure', ...rest);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(message);
  });
});

describe('sheet', () => {
  // A station's data folder with two runs of the built-in demo procedure: one finished (FAIL: one
  // point locates no null), one still open. The database is then closed, as after a shift.
  let data: string;
  let finished: number;
  let open: number;
  beforeAll(() => {
    data = join(files.path, 'station');
    const station = openTestStation(data);
    try {
      const procedureId = station.records.listProcedures()[0].id;
      const stimulus = { on: true, frequencyHz: 14, levelDbfs: -12 };
      finished = startUnit(station.records, { serial: 'MG20-2611-0301', procedureId, operator: 'A. Tester' }).run.id;
      station.records.recordTrimPoint({ runId: finished, position: 3, reading: readingWithThd(-62), live: null, stimulus });
      station.records.finishRun({ runId: finished, asFailure: true });
      open = station.records.openRun({ serial: 'MG20-2611-0302', procedureId, operator: 'A. Tester' }).run.id;
    } finally {
      station.close();
    }
  });
  const databaseFile = () => join(data, 'trimbench.sqlite');
  const sha = (file: string) => createHash('sha256').update(readFileSync(file)).digest('hex');

  it('prints the run’s sheet as one JSON object, its verdict as stored, and changes nothing in the database', () => {
    const before = sha(databaseFile());
    const result = run('sheet', '--data', data, '--run', String(finished), '--json');
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const lines = result.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const sheet = JSON.parse(lines[0]);
    // What the station stored, read with SQL straight from the file.
    const db = new Database(databaseFile(), { readonly: true });
    const row = db.prepare('SELECT verdict, verdict_reasons_json FROM runs WHERE id = ?').get(finished) as { verdict: string; verdict_reasons_json: string };
    db.close();
    expect(sheet.runId).toBe(finished);
    expect(sheet.unit.serial).toBe('MG20-2611-0301');
    expect(sheet.verdict.verdict).toBe(row.verdict);
    expect(sheet.verdict.text).toBe(row.verdict.toUpperCase());
    // Stored as {"v": version, "value": reasons} (electron/services/stored-record.ts).
    expect(sheet.verdict.reasons).toEqual(JSON.parse(row.verdict_reasons_json).value);
    expect(sheet.verdict.reasons.length).toBeGreaterThan(0);
    // The built-in procedure is the schema-1 one: a safety notice, then the trim (docs/procedures.md, upgrading).
    expect(sheet.steps.map((s: { kind: string }) => s.kind)).toEqual(['notice', 'trim']);
    expect(sheet.trim.points).toHaveLength(1);
    // Opened read-only (SQLite's SQLITE_OPEN_READONLY): the file's bytes are as they were.
    expect(sha(databaseFile())).toBe(before);
  });

  it('an unfinished run reads NOT FINISHED, never PASS; without --json, a readable summary', () => {
    const result = run('sheet', '--data', data, '--run', String(open));
    expect(result.status).toBe(0);
    expect(result.stdout.split('\n')[0]).toBe(`MG20-2611-0302 — run ${open}, MG20-LF-TRIM revision B: NOT FINISHED`);
    expect(result.stdout).toMatch(/^ 1 safety\s+not run$/m);
  });

  // A non-zero exit status for failure is the POSIX convention scripts rely on (common practice).
  it.each([
    ['a folder with no database', () => ['--data', files.path, '--run', '1'], /no station database here \(trimbench\.sqlite not found\)/],
    ['a run that does not exist', () => ['--data', data, '--run', '999'], /There is no run with id 999/],
    ['a run number that is not one', () => ['--data', data, '--run', '1.5'], /--run must be a run number/],
    ['no --data', () => ['--run', '1'], /sheet needs --data DIR and --run N/],
  ])('fails on %s with a message on stderr, nothing on stdout, and status 1', (_what, args, message) => {
    const result = run('sheet', ...args());
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(message);
  });

  it('fails on a run whose stored record is damaged, naming the run, with status 1', () => {
    const damaged = join(files.path, 'damaged');
    cpSync(data, damaged, { recursive: true });
    const db = new Database(join(damaged, 'trimbench.sqlite'));
    db.exec('DROP TRIGGER trim_points_never_change');
    // A reading changed behind the station's back: its check value no longer matches.
    db.prepare("UPDATE trim_points SET reading_json = replace(reading_json, '-62', '-72') WHERE run_id = ?").run(finished);
    db.close();
    const result = run('sheet', '--data', damaged, '--run', String(finished), '--json');
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(new RegExp(`Run ${finished} \\(serial MG20-2611-0301\\) cannot be read`));
  });
});

describe('sheet of a run walked through its steps in main', () => {
  // The demo file's notice, trim, 14 Hz distortion and 1 kHz gain steps, walked on a station
  // calibrated by the dBu definition (0 dBu = √0.6 V RMS = 0.7746 V): the voltmeter reads 0.7746 V
  // while −20 dBFS plays, so the output's full scale is +20 dBu; the loop reads −18 dBFS for
  // −20 dBFS played, so the input's full scale is +18 dBu.
  const OUT_FS = 20;
  const IN_FS = 18;
  // y = x − a·x³ driven at unit level: cos³θ = (3 cos θ + cos 3θ)/4, so H3 is (a/4)/(1 − 3a/4) of the fundamental.
  const a = 0.002;
  const h3Db = 20 * Math.log10(a / 4 / (1 - (3 * a) / 4));
  let data: string;
  let runId: number;
  beforeAll(async () => {
    data = join(files.path, 'walked');
    const station = openTestStation(data);
    const call = async (channel: string, payload: unknown, caller = noCaller) => {
      const answer = await dispatch(station.handlers, channel, payload, caller);
      if (!answer.ok) throw new Error(answer.error.message);
      return answer.value as RunDetail & { id: number };
    };
    try {
      const setup = { inputDeviceId: 'in', inputDeviceLabel: 'In 1-2', inputChannel: 0, outputDeviceId: 'out', outputDeviceLabel: 'Out 1-2', sampleRateHz: 48000 };
      await call('recordCalibration', {
        operator: 'A. Tester',
        setup,
        output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
        input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1000 },
      });
      const file = JSON.parse(readFileSync(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url), 'utf8'));
      file.code = 'MG20-SHEET';
      file.steps = file.steps.filter((s: { id: string }) => ['safety', 'lf-trim', 'thd-14hz', 'gain-1khz'].includes(s.id));
      const path = join(files.path, 'sheet-walk.json');
      writeFileSync(path, JSON.stringify(file));
      const { id: procedureId } = await call('importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
      runId = (await call('openRun', { serial: 'MG20-2611-0401', procedureId, operator: 'A. Tester', setup, lot: 'WO-77' })).run.id;
      await call('acknowledgeNotice', { runId, stepId: 'safety' });
      const trimStimulus = { on: true, frequencyHz: 14, levelDbfs: -12 };
      for (const position of [0, 2.5, 4, 4.5]) station.records.recordTrimPoint({ runId, position, reading: onPhasorLine(position, 5), live: STEADY_LIVE, stimulus: trimStimulus, setup });
      const recommended = station.records.getRun(runId).assessment!.recommendedPosition!;
      station.records.recordTrimPoint({ runId, position: recommended, reading: onPhasorLine(recommended, 5), live: STEADY_LIVE, stimulus: trimStimulus, setup });
      await call('completeTrim', { runId, stepId: 'lf-trim' });
      const at4Dbu = (frequencyHz: number) => ({ on: true, frequencyHz, levelDbfs: 4 - OUT_FS });
      const at14 = withAllHarmonics(readingWithThd(h3Db, { fundamental: { frequencyHz: 14, levelDbfs: 4 - IN_FS, phaseDeg: 0 } }));
      await call('recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading: at14 }], setup });
      // 0.3 dB of gain: the output reads 4.3 dBu for the 4 dBu played.
      const at1k = readingWithThd(-90, { fundamental: { frequencyHz: 1000, levelDbfs: 4.3 - IN_FS, phaseDeg: 0 }, harmonics: [{ order: 3, frequencyHz: 3000, levelDbc: -90, phaseDeg: 0 }] });
      await call('recordCheckStep', { runId, stepId: 'gain-1khz', stimulus: at4Dbu(1000), readings: [{ channel: 1, reading: at1k }], setup });
      await call('finishRun', { runId });
    } finally {
      station.close();
    }
  });

  it('prints every step with its stored values against their limits, and the stored verdict', () => {
    const result = run('sheet', '--data', data, '--run', String(runId), '--json');
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const sheet = JSON.parse(result.stdout);
    const db = new Database(join(data, 'trimbench.sqlite'), { readonly: true });
    const stored = db.prepare('SELECT verdict FROM runs WHERE id = ?').get(runId) as { verdict: string };
    db.close();
    expect(sheet.verdict.text).toBe(stored.verdict.toUpperCase());
    expect(sheet.unit.lot).toBe('WO-77');
    const step = (id: string) => sheet.steps.find((s: { id: string }) => s.id === id);
    expect(sheet.steps.map((s: { id: string; statusText: string }) => [s.id, s.statusText])).toEqual([
      ['safety', 'acknowledged'],
      ['lf-trim', 'PASS'],
      ['thd-14hz', 'PASS'],
      ['gain-1khz', 'PASS'],
    ]);
    // The cubic stage's H3 (Fourier series above) against the file's limit, inclusive (docs/procedures.md).
    expect(step('thd-14hz').measurements[1]).toMatchObject({ label: 'H3', valueText: `−${Math.abs(h3Db).toFixed(1)} dBc`, limitText: '≤ −52.0 dBc', failing: false });
    expect(step('gain-1khz').measurements[0]).toMatchObject({ label: 'Gain', valueText: '+0.30 dB', limitText: '−0.50 to +0.50 dB' });
    // The calibration the run used, by the voltmeter's and the loop's figures above.
    expect(sheet.calibration.levels).toBe(`0 dBFS = +${IN_FS.toFixed(1)} dBu in, +${OUT_FS.toFixed(1)} dBu out`);
  });

  it('without --json, prints what the page shows besides the values: the invented-values label and the notes', () => {
    const json = JSON.parse(run('sheet', '--data', data, '--run', String(runId), '--json').stdout);
    const result = run('sheet', '--data', data, '--run', String(runId));
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const lines = result.stdout.split('\n');
    // The demo file says "invented": the sheet says its values are invented, as the page does.
    expect(json.procedure.inventedLabel).toMatch(/invented/);
    expect(lines).toContain(json.procedure.inventedLabel);
    // The gain step's note: the levels it was measured from, 4.3 dBu out for the 4 dBu played (above).
    const gainNote = json.steps.find((s: { id: string }) => s.id === 'gain-1khz').measurements[0];
    expect(gainNote.note).toBe('4.30 dBu out for 4.00 dBu in');
    const gainLine = lines.find((l) => /^\s+Gain\s/.test(l))!;
    expect(gainLine).toMatch(new RegExp(`\\[${gainNote.noteNumber}\\]$`));
    expect(lines).toContain(`  [${gainNote.noteNumber}] 4.30 dBu out for 4.00 dBu in`);
    // Every note of the sheet, each once, numbered as the page numbers them.
    json.notes.forEach((note: string, i: number) => expect(lines.filter((l) => l === `  [${i + 1}] ${note}`)).toHaveLength(1));
    // The trim's final reading, with the trimmer where it was left.
    expect(lines.some((l) => l.startsWith('Trim: THD ') && l.includes(json.trim.finalReading))).toBe(true);
  });
});

describe('sweep and response', () => {
  // A 3 s sweep from 20 Hz to 20 kHz at 48 kHz, −6 dBFS: the shortest that resolves 20 Hz (4 cycles
  // in the room between the linear and the 2nd harmonic's impulse responses).
  const SPEC = ['--from', '20', '--to', '20000', '--seconds', '3', '--rate', '48000', '--level-dbfs', '-6'];
  const spec = { startHz: 20, endHz: 20000, durationS: 3, sampleRateHz: 48000, levelDbfs: -6 };
  const DELAY = 2345;
  const CORNER_HZ = 20000;
  let sweepFile: string;
  let captureFile: string;

  beforeAll(() => {
    sweepFile = join(files.path, 'sweep.wav');
    const written = run('sweep', '--write', sweepFile, ...SPEC);
    expect(written.stderr).toBe('');
    expect(written.status).toBe(0);
    // The capture a test bench would make: the file through a known delay and a first-order RC
    // low-pass at 20 kHz, on the second channel of a stereo recording.
    const played = decodeWav(readFileSync(sweepFile)).channels[0];
    const unit = filtered(played, 48000, rcLowPass(CORNER_HZ), DELAY);
    captureFile = join(files.path, 'capture.wav');
    writeFileSync(captureFile, encodeWavFloat32([new Float64Array(unit.length), unit], 48000));
  });

  it('sweep --write writes exactly the samples the generator plays, as a mono 32-bit float WAV', () => {
    const wav = decodeWav(readFileSync(sweepFile));
    expect(wav.sampleRateHz).toBe(48000);
    expect(wav.encoding).toBe('float');
    expect(wav.bitsPerSample).toBe(32);
    expect(wav.channels).toHaveLength(1);
    const expected = logSweep(spec);
    expect(wav.channels[0].length).toBe(expected.length);
    expect(wav.channels[0].every((v, i) => v === expected[i])).toBe(true);
  });

  it('response --json prints one object of exactly the documented shape, with the delay and the RC’s response', () => {
    const result = run('response', captureFile, ...SPEC, '--channel', '1', '--json');
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const lines = result.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const json = JSON.parse(lines[0]);
    expect(Object.keys(json)).toEqual(['latencySamples', 'referenceHz', 'response', 'harmonics']);
    for (const p of json.response) expect(Object.keys(p)).toEqual(['frequencyHz', 'levelDb', 'phaseDeg']);
    for (const h of json.harmonics) {
      expect(Object.keys(h)).toEqual(['order', 'points']);
      for (const p of h.points) expect(Object.keys(p)).toEqual(['frequencyHz', 'levelDbc']);
    }
    // The delay by construction, exactly; an RC at 20 kHz delays a band-limited pulse by under half a sample.
    expect(json.latencySamples).toBe(DELAY);
    expect(json.referenceHz).toBe(1000);
    // From --from to --to, at most 1/12 octave apart.
    const f = json.response.map((p: { frequencyHz: number }) => p.frequencyHz);
    expect(f[0]).toBe(20);
    expect(f.at(-1)).toBe(20000);
    for (let i = 1; i < f.length; i++) expect(Math.log2(f[i] / f[i - 1])).toBeLessThanOrEqual(1 / 12 + 1e-12);
    // |H| = 1/√(1 + (f/fc)²) relative to 1 kHz and ∠H = −atan(f/fc) (first-order RC, any circuits textbook).
    const h = rcLowPass(CORNER_HZ);
    for (const p of json.response.filter((_: unknown, i: number) => i % 10 === 0 || i === f.length - 1)) {
      expect(Math.abs(p.levelDb - 20 * Math.log10(magnitude(h(p.frequencyHz)) / magnitude(h(1000))))).toBeLessThan(0.05);
      expect(Math.abs(p.phaseDeg - phaseDeg(h(p.frequencyHz)))).toBeLessThan(0.5);
    }
    // At 20 kHz the RC is 3 dB down and 45° behind.
    expect(json.response.at(-1).levelDb).toBeCloseTo(-3.01, 1);
    expect(json.response.at(-1).phaseDeg).toBeCloseTo(-45, 0);
    // A linear filter makes no harmonics: H2 to H5 are all read (the sweep is long enough) and lie at the floor.
    expect(json.harmonics.map((s: { order: number }) => s.order)).toEqual([2, 3, 4, 5]);
    for (const s of json.harmonics) for (const p of s.points) expect(p.levelDbc).toBeLessThan(-90);
  });

  it('without --json prints a readable table with the latency', () => {
    const result = run('response', captureFile, ...SPEC, '--channel', '1');
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(new RegExp(`latency\\s+${DELAY} samples`));
    expect(result.stdout).toMatch(/frequency Hz\s+level dB\s+phase °\s+H2 dBc\s+H3 dBc\s+H4 dBc\s+H5 dBc/);
  });

  it.each([
    ['a capture at another rate', 'rate44k.wav', ['--channel', '0'], /recorded at 44100 Hz, but the sweep was made at --rate 48000 Hz/],
    ['noise instead of the sweep', 'noise.wav', [], /does not hold the sweep clearly/],
    ['a channel that does not exist', 'sweep.wav', ['--channel', '2'], /has 1 channel\(s\); --channel 2 does not exist/],
    ['a reference outside the range', 'sweep.wav', ['--reference-hz', '30000'], /--reference-hz must lie between --from and --to/],
    ['a missing file', 'missing.wav', [], /missing\.wav: cannot be read \(ENOENT\)/],
  ])('response refuses %s with one line and status 1', (_what, name, extra, message) => {
    writeFileSync(join(files.path, 'rate44k.wav'), encodeWavFloat32([logSweep({ ...spec, sampleRateHz: 44100 })], 44100));
    const noise = gaussian(seededRandom(11));
    writeFileSync(join(files.path, 'noise.wav'), encodeWavFloat32([Float64Array.from({ length: 48000 * 4 }, () => 0.05 * noise())], 48000));
    const result = run('response', join(files.path, name), ...SPEC, ...extra);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(message);
  });

  it('response refuses a capture of another sweep than the one described (a mistyped --from)', () => {
    const result = run('response', captureFile, '--from', '21', ...SPEC.slice(2), '--channel', '1');
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/does not follow this sweep/);
  });

  it.each([
    ['no --seconds', ['--from', '20', '--to', '20000', '--rate', '48000', '--level-dbfs', '-6'], /sweep needs --seconds/],
    ['an end above Nyquist', ['--from', '20', '--to', '30000', '--seconds', '3', '--rate', '48000', '--level-dbfs', '-6'], /below Nyquist \(24000 Hz\)/],
    ['a level above full scale', ['--from', '20', '--to', '20000', '--seconds', '3', '--rate', '48000', '--level-dbfs', '3'], /--level-dbfs must be a level in dBFS from -120 to 0/],
    ['an exponent', ['--from', '2e1', '--to', '20000', '--seconds', '3', '--rate', '48000', '--level-dbfs', '-6'], /--from must be a frequency in Hz above 0 \(a plain decimal\)/],
    ['a start above the end', ['--from', '2000', '--to', '200', '--seconds', '3', '--rate', '48000', '--level-dbfs', '-6'], /must end above its start/],
    ['an unknown option', [...SPEC, '--shape', 'linear'], /Unknown option '--shape'/],
  ])('sweep refuses %s with one line and status 1', (_what, args, message) => {
    const result = run('sweep', '--write', join(files.path, 'never.wav'), ...args);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(message);
  });

  it('sweep without --write says so', () => {
    const result = run('sweep', ...SPEC);
    expect(result.status).toBe(1);
    expect(result.stderr).toMatch(/sweep needs --write OUT\.wav/);
  });
});

describe('ringing', () => {
  // Two periods of a 20 kHz square wave through invented second-order stages (Ogata, Modern Control
  // Engineering: overshoot exp(−ζπ/√(1−ζ²)), ringing at fn·√(1−ζ²), no overshoot for ζ ≥ 1), as an
  // 8-bit scope with a screen of ±0.8 V records them: a 1 V step, noise of half a code.
  const ringingStage = { zeta: 0.5, naturalHz: 2.5e6 };
  const quietStage = { zeta: 1.5, naturalHz: 1e6 };
  const dt = 4e-9;
  const capture = (system: typeof ringingStage, seed: number) =>
    scopeCapture(squareWaveResponse({ system, squareHz: 20e3, sampleIntervalS: dt, samples: 27500, lowV: -0.5, highV: 0.5, firstEdgeS: 5e-6 }), {
      screenV: [-0.8, 0.8],
      bits: 8,
      noiseV: 0.5 * (1.6 / 256),
      seed,
    });
  const ringing = capture(ringingStage, 21);
  const quiet = capture(quietStage, 22);
  const file = (name: string) => join(files.path, name);

  beforeAll(() => {
    writeFileSync(
      file('stage.csv'),
      scopeCsvText(-5e-6, dt, [ringing], {
        preamble: [
          ['Instrument', 'Bench scope (invented)'],
          ['Record Length', '27500'],
          ['Sample Interval', '4e-9'],
        ],
      }),
    );
    writeFileSync(file('two-channels.csv'), scopeCsvText(0, dt, [quiet, ringing], { separator: ';', decimalComma: true, header: null }));
    const lines = scopeCsvText(-5e-6, dt, [ringing]).split('\n');
    lines[11] = '-4.96e-06,0.5,0.7';
    writeFileSync(file('broken.csv'), lines.join('\n'));
    writeFileSync(file('noise.csv'), scopeCsvText(0, dt, [scopeCapture(new Float64Array(5000), { screenV: [-0.8, 0.8], bits: 8, noiseV: 0.01, seed: 23 })]));
  });

  it('--json prints exactly one object, the medians over the edges as the formulas give them', () => {
    const result = run('ringing', file('stage.csv'), '--json');
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    const lines = result.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const json = JSON.parse(lines[0]);
    expect(Object.keys(json)).toEqual(['edges', 'ringFrequencyHz', 'dampingRatio', 'overshootPercent', 'settlingTimeS', 'flags']);
    expect(json.edges).toBe(4);
    expect(json.flags).toEqual([]);
    // ζ = 0.5 keeps two peaks above an 8-bit scope's noise: tolerances as in tests/unit/ringing.test.ts.
    expect(Math.abs(json.ringFrequencyHz / textbookRingHz(ringingStage) - 1)).toBeLessThan(0.03);
    expect(Math.abs(json.dampingRatio / 0.5 - 1)).toBeLessThan(0.04);
    expect(Math.abs(json.overshootPercent - 100 * textbookOvershoot(0.5))).toBeLessThan(0.7);
    // Settling to ±2 % of the step from the 50 % point, found on the formula (no peak lies near 2 %).
    expect(Math.abs(json.settlingTimeS - settlingFromFormula(ringingStage, 0.02))).toBeLessThan(4 * dt + 0.01 / textbookRingHz(ringingStage));
  });

  it('--channel N counts the voltage columns from 0: an overdamped stage on 0 gives null and no-ringing', () => {
    const quietResult = run('ringing', file('two-channels.csv'), '--json');
    expect(quietResult.status).toBe(0);
    const quietJson = JSON.parse(quietResult.stdout);
    expect(quietJson.ringFrequencyHz).toBeNull();
    expect(quietJson.dampingRatio).toBeNull();
    expect(quietJson.flags).toEqual(['no-ringing']);
    expect(quietJson.overshootPercent).toBeLessThan(1);
    const ringingJson = JSON.parse(run('ringing', file('two-channels.csv'), '--json', '--channel', '1').stdout);
    expect(Math.abs(ringingJson.ringFrequencyHz / textbookRingHz(ringingStage) - 1)).toBeLessThan(0.03);
  });

  it('is listed in the usage', () => {
    expect(run('help').stdout).toMatch(/^  trimbench ringing FILE\.csv \[--channel N\] \[--json\]$/m);
  });

  it('without --json, a short summary that says why the record comes from an oscilloscope', () => {
    const result = run('ringing', file('stage.csv'));
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/^ringing\s+2\.1\d\d MHz, damping ratio 0\.[45]\d\d/m);
    expect(result.stdout).toMatch(/^edges\s+4 \(2 rising, 2 falling\)$/m);
    expect(result.stdout).toMatch(/^settling\s+.* to within ±2 % of the step/m);
    expect(result.stdout).toContain('An audio interface cannot see ringing at 100 kHz and above');
    expect(result.stdout).toContain('which is why this record comes from an oscilloscope');
  });

  it.each([
    ['a broken row', ['broken.csv'], /^trimbench ringing: \S*broken\.csv: line 12: 3 values, expected 2 \(Time, CH1\)$/],
    ['a missing file', ['missing.csv'], /^trimbench ringing: \S*missing\.csv: cannot be read \(ENOENT\)$/],
    ['a channel that does not exist', ['stage.csv', '--channel', '1'], /^trimbench ringing: \S*stage\.csv: has 1 voltage column \(“CH1”\); --channel 1 does not exist$/],
    ['a channel that is not a number', ['stage.csv', '--channel', 'one'], /^trimbench ringing: --channel must be a whole number ≥ 0/],
    ['noise and no square wave', ['noise.csv'], /^trimbench ringing: \S*noise\.csv: channel 0 \(“CH1”\): the record shows no square wave/],
  ])('a file or option it cannot use (%s): one line naming it, nothing on stdout, status 1', (_what, args, message) => {
    const [name, ...options] = args;
    const result = run('ringing', name.endsWith('.csv') ? file(name) : name, ...options);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    const lines = result.stderr.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(message);
  });
});
