// Issue 10, "The run and its verdict": a run walks its procedure's steps in order, a step can be
// repeated before the run is finished (the latest counts), a failed step that says "stop" ends the
// run as FAIL with its reason, and the verdict is PASS only when every step passed. Each measurement
// is stored with its limits as they were.
//
// Expected values come from outside the code:
// - levels by the dBu definition, 0 dBu = √0.6 V RMS = 0.7746 V (1 mW in 600 Ω), and a full-scale
//   sine at 0 dBFS (AES17): the station is calibrated with a voltmeter reading 0.7746 V while the
//   generator plays −20 dBFS, and a loopback reading −18 dBFS for −20 dBFS played;
// - distortion by the Fourier series of a cubic stage, y = x − a·x³ driven with x = cos θ:
//   cos³θ = (3 cos θ + cos 3θ)/4, so the fundamental is 1 − 3a/4 and H3 is a/4 of it, exactly;
// - the trim on design §5's constructed phasor line (tests/support/station.ts), as earned-pass does.

import { cpSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { DATABASE_FILE, openStation } from '../../electron/services/station.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { accepted, noCaller, TEST_SETUP, onPhasorLine, readingWithThd, refusedWith, STEADY_LIVE, tempDir, withAllHarmonics } from '../support/station.ts';

const RESOURCE = fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url));
const SETUP = TEST_SETUP;

/** dBu of a voltage: 0 dBu = √0.6 V RMS. */
const dbuOfVolts = (volts: number) => 20 * Math.log10(volts / Math.sqrt(0.6));
/** The output's dBu at 0 dBFS: the meter reads 0.7746 V while −20 dBFS plays. */
const OUT_FS = dbuOfVolts(0.7746) + 20;
/** The input's dBu at 0 dBFS: the loop carries −20 dBFS + OUT_FS dBu, read as −18 dBFS. */
const IN_FS = -20 + OUT_FS + 18;
/** H3 relative to the fundamental of y = x − a·x³ at unit drive, dB (Fourier series above). */
const h3OfCubic = (a: number) => 20 * Math.log10(a / 4 / (1 - (3 * a) / 4));

/**
 * A walk procedure from the demo file: its notice, its trim (stop on failure), the 14 Hz distortion
 * step (H3 high −52 dBc, THD high −50 dB; stop) and the 1 kHz gain step (±0.5 dB; continue), 4 dBu.
 */
function walkProcedureFile(folder: string): string {
  const file = JSON.parse(readFileSync(RESOURCE, 'utf8'));
  file.code = 'MG20-WALK';
  file.revision = 'A';
  file.steps = file.steps.filter((s: { id: string }) => ['safety', 'lf-trim', 'thd-14hz', 'gain-1khz'].includes(s.id));
  const path = join(folder, 'walk.json');
  writeFileSync(path, JSON.stringify(file));
  return path;
}

const TRIM_STIMULUS = { on: true, frequencyHz: 14, levelDbfs: -12 };
/** The generator at 4 dBu, through the output calibration (dBFS = dBu − OUT_FS). */
const at4Dbu = (frequencyHz: number) => ({ on: true, frequencyHz, levelDbfs: 4 - OUT_FS });

/** The unit's answer at 14 Hz when its stage is y = x − a·x³, at unity gain. */
const cubicAt14Hz = (a: number): Reading =>
  withAllHarmonics(readingWithThd(h3OfCubic(a), { fundamental: { frequencyHz: 14, levelDbfs: 4 - IN_FS, phaseDeg: 0 } }));
/** The unit's answer at 1 kHz with gain `gainDb` (output dBu − input dBu), its distortion far below any limit. */
const withGainAt1kHz = (gainDb: number): Reading =>
  readingWithThd(-90, {
    fundamental: { frequencyHz: 1000, levelDbfs: 4 + gainDb - IN_FS, phaseDeg: 0 },
    harmonics: [{ order: 3, frequencyHz: 3000, levelDbc: -90, phaseDeg: 0 }],
  });

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openStation>;
let procedureId: number;

const call = <T = RunDetail>(channel: string, payload: unknown, caller: CallerContext = noCaller) => accepted<T>(station.handlers, channel, payload, caller);
const refusal = (channel: string, payload: unknown) => refusedWith(station.handlers, channel, payload);
const open = () => openStation({ dataDir: dir.path, stationName: 'bench-7', log: { record: () => '' } });

beforeEach(async () => {
  dir = tempDir('trimbench-steps-');
  station = open();
  await call('recordCalibration', {
    operator: 'A. Tester',
    setup: SETUP,
    output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
    input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1000.2 },
  });
  const path = walkProcedureFile(dir.path);
  const imported = await call<{ id: number }>('importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
  procedureId = imported.id;
});
afterEach(() => {
  station.close();
  dir.remove();
});

const openUnit = (serial: string, extra: object = {}) => call('openRun', { serial, procedureId, operator: 'A. Tester', setup: SETUP, ...extra });

/** The trim done to the assistant's recommended setting on the constructed line (true null at 5 turns). */
async function trim(runId: number): Promise<void> {
  for (const position of [0, 2.5, 4, 4.5]) {
    station.records.recordTrimPoint({ runId, position, reading: onPhasorLine(position, 5), live: STEADY_LIVE, stimulus: TRIM_STIMULUS, setup: SETUP });
  }
  const recommended = station.records.getRun(runId).assessment!.recommendedPosition!;
  station.records.recordTrimPoint({ runId, position: recommended, reading: onPhasorLine(recommended, 5), live: STEADY_LIVE, stimulus: TRIM_STIMULUS, setup: SETUP });
}

/** Notice acknowledged and trim completed: the run stands at its first check step. */
async function throughTheTrim(serial: string): Promise<number> {
  const runId = (await openUnit(serial)).run.id;
  await call('acknowledgeNotice', { runId, stepId: 'safety' });
  await trim(runId);
  const detail = await call('completeTrim', { runId, stepId: 'lf-trim' });
  expect(detail.judgement.nextStepId).toBe('thd-14hz');
  return runId;
}
const distortion = (runId: number, a: number) => call('recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading: cubicAt14Hz(a) }], setup: SETUP });
const gain = (runId: number, gainDb: number) => call('recordCheckStep', { runId, stepId: 'gain-1khz', stimulus: at4Dbu(1000), readings: [{ channel: 1, reading: withGainAt1kHz(gainDb) }], setup: SETUP });
const rows = (table: string) => (station.db.prepare(`SELECT COUNT(*) AS n FROM ${table}`).get() as { n: number }).n;

describe('the step walk, recorded in main', () => {
  it('refuses steps out of order, of the wrong kind or not in the procedure, and stores nothing then', async () => {
    const runId = (await openUnit('MG20-2611-0101')).run.id;
    expect(await refusal('completeTrim', { runId, stepId: 'lf-trim' })).toMatch(/steps are recorded in order, and step “safety” has no result yet/);
    expect(await refusal('recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading: cubicAt14Hz(0.002) }], setup: SETUP })).toMatch(/in order/);
    expect(await refusal('acknowledgeNotice', { runId, stepId: 'lf-trim' })).toMatch(/“lf-trim” is a trim step, not a notice step/);
    expect(await refusal('acknowledgeNotice', { runId, stepId: 'no-such-step' })).toMatch(/not in procedure MG20-WALK revision A/);
    expect(rows('step_results')).toBe(0);
    const acknowledged = await call('acknowledgeNotice', { runId, stepId: 'safety' });
    expect(acknowledged.stepResults.map((r) => [r.stepId, r.kind, r.attempt, r.verdict])).toEqual([['safety', 'notice', 1, 'pass']]);
    expect(acknowledged.judgement.nextStepId).toBe('lf-trim');
    // The trim's own rule: no points, nothing to judge.
    expect(await refusal('completeTrim', { runId, stepId: 'lf-trim' })).toMatch(/No trim point has been recorded/);
  });

  it('stores each measurement with its limits as they were, and reads them back after a restart', async () => {
    const runId = await throughTheTrim('MG20-2611-0102');
    await distortion(runId, 0.002);
    const detail = await gain(runId, 0.3);
    station.close();
    station = open();
    const read = station.records.getRun(runId);
    expect(read.stepResults).toEqual(detail.stepResults);
    const h3 = h3OfCubic(0.002); // −66.0 dBc
    const [thd14, gain1k] = read.stepResults.slice(2);
    expect(thd14.stimulus).toEqual(at4Dbu(14));
    // One harmonic: THD (the root sum of squares of the harmonics) is that harmonic's level.
    expect(thd14.measurements.map((m) => [m.quantity, m.unit, m.low, m.high, m.verdict])).toEqual([
      ['thdDb', 'dB', null, -50, 'pass'],
      ['harmonicsDbc.H3', 'dBc', null, -52, 'pass'],
    ]);
    expect(thd14.measurements[0].value).toBeCloseTo(h3, 9);
    expect(thd14.measurements[1].value).toBeCloseTo(h3, 9);
    // Gain: output dBu − input dBu, each from its own calibration.
    expect(gain1k.measurements).toHaveLength(1);
    expect(gain1k.measurements[0]).toMatchObject({ quantity: 'gainDb', unit: 'dB', low: -0.5, high: 0.5, verdict: 'pass' });
    expect(gain1k.measurements[0].value).toBeCloseTo(0.3, 9);
    // The trim step's one measurement: its final THD against the trim's limit (−60 dB in the demo file).
    const trimResult = read.stepResults.find((r) => r.stepId === 'lf-trim')!;
    expect(trimResult.measurements).toMatchObject([{ quantity: 'thdDb', unit: 'dB', low: null, high: -60, verdict: 'pass' }]);
    expect(trimResult.measurements[0].value).toBe(read.trimPoints.at(-1)!.reading.thdDb);
    // In the rows themselves, beside each value.
    expect(station.db.prepare('SELECT quantity, low, high FROM measurements WHERE run_id = ? ORDER BY id').all(runId)).toEqual([
      { quantity: 'thdDb', low: null, high: -60 },
      { quantity: 'thdDb', low: null, high: -50 },
      { quantity: 'harmonicsDbc.H3', low: null, high: -52 },
      { quantity: 'gainDb', low: -0.5, high: 0.5 },
    ]);
  });

  it('ends the run at a failed "stop" step: no later step is accepted, and Finish gives FAIL with its reason', async () => {
    const runId = await throughTheTrim('MG20-2611-0103');
    // a = 0.01: H3 = 20·log10(0.0025 / 0.9925) = −51.98 dBc, above the −52 dBc limit; THD (−51.98 dB) within −50.
    const failed = await distortion(runId, 0.01);
    expect(failed.judgement).toMatchObject({ stoppedAt: 'thd-14hz', nextStepId: null, finished: true, verdict: 'fail' });
    const [thd, h3] = failed.stepResults.at(-1)!.measurements;
    expect([thd.verdict, h3.verdict]).toEqual(['pass', 'fail']);
    expect(await refusal('recordCheckStep', { runId, stepId: 'gain-1khz', stimulus: at4Dbu(1000), readings: [{ channel: 1, reading: withGainAt1kHz(0) }], setup: SETUP })).toMatch(
      /Step “thd-14hz” failed, and a failure there ends the run/,
    );
    // Nor the failed step itself again: measured until it passes, the failure would be hidden. The
    // unit is tested again in a retest, which names this run and why.
    expect(await refusal('recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading: cubicAt14Hz(0.002) }], setup: SETUP })).toMatch(/ends the run/);
    expect(await refusal('finishRun', { runId })).toMatch(/cannot pass:[\s\S]*thd-14hz.*stops the run.*H3/);
    const finished = await call('finishRun', { runId, asFailure: true });
    expect(finished.run.verdict).toBe('fail');
    expect(finished.run.verdictReasons.join(' ')).toMatch(/“thd-14hz”.*failed, and a failure there stops the run/);
    expect(await refusal('acknowledgeNotice', { runId, stepId: 'safety' })).toMatch(/finished/);
  });

  it('lets a step that goes on after a failure be repeated before the run is finished; the latest result counts', async () => {
    const runId = await throughTheTrim('MG20-2611-0104');
    await distortion(runId, 0.002);
    // 0.8 dB is outside ±0.5 dB (a miswired attenuator, say); measured again after the fix, 0.3 dB.
    await gain(runId, 0.8);
    const repeated = await gain(runId, 0.3);
    expect(repeated.stepResults.filter((r) => r.stepId === 'gain-1khz').map((r) => [r.attempt, r.verdict])).toEqual([
      [1, 'fail'],
      [2, 'pass'],
    ]);
    expect(repeated.judgement).toMatchObject({ stoppedAt: null, nextStepId: null, verdict: 'pass' });
    expect((await call('finishRun', { runId })).run).toMatchObject({ verdict: 'pass', verdictReasons: [] });
  });

  it('keeps the trim where the checks found it: no point, fit change or new completion after a later step was measured', async () => {
    const runId = await throughTheTrim('MG20-2611-0111');
    await distortion(runId, 0.002);
    const pointsBefore = rows('trim_points');
    // The checks were measured at this setting; a trimmer moved now would leave them describing another unit.
    expect(await refusal('recordTrimPoint', { runId, position: 4.7, reading: onPhasorLine(4.7, 5), live: STEADY_LIVE, stimulus: TRIM_STIMULUS })).toMatch(
      /“thd-14hz” after the trim has been measured.*start a retest/,
    );
    expect(await refusal('completeTrim', { runId, stepId: 'lf-trim' })).toMatch(/after the trim has been measured/);
    expect(rows('trim_points')).toBe(pointsBefore);
  });

  it('passes a unit only when every step passed: a failed "continue" step lets the walk go on, and the unit fails', async () => {
    const runId = await throughTheTrim('MG20-2611-0105');
    await distortion(runId, 0.002);
    // 0.8 dB of gain: outside ±0.5 dB.
    const detail = await gain(runId, 0.8);
    expect(detail.judgement).toMatchObject({ verdict: 'fail', finished: true, stoppedAt: null });
    expect(await refusal('finishRun', { runId })).toMatch(/“gain-1khz”.*failed: Gain 0\.8 dB is above the high limit of 0\.5 dB/);
    expect((await call('finishRun', { runId, asFailure: true })).run.verdict).toBe('fail');

    // Every step not yet run is a reason too: a unit is not passed on its trim alone.
    const second = (await openUnit('MG20-2611-0106')).run.id;
    await call('acknowledgeNotice', { runId: second, stepId: 'safety' });
    await trim(second);
    await call('completeTrim', { runId: second, stepId: 'lf-trim' });
    expect(await refusal('finishRun', { runId: second })).toMatch(/“thd-14hz”.*was not run[\s\S]*“gain-1khz”.*was not run/);
  });

  it('refuses a check reading that is not of the stimulus, and stores nothing', async () => {
    const runId = await throughTheTrim('MG20-2611-0107');
    const before = [rows('step_results'), rows('measurements')];
    // The tone captured at 15.5 Hz while the generator plays 14 Hz: another source (10.7 % off).
    const other = readingWithThd(-70, { fundamental: { frequencyHz: 15.5, levelDbfs: 4 - IN_FS, phaseDeg: 0 }, harmonics: [{ order: 3, frequencyHz: 46.5, levelDbc: -70, phaseDeg: 0 }] });
    expect(await refusal('recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading: other }], setup: SETUP })).toMatch(
      /Step “thd-14hz” was not recorded\. The captured tone is at 15\.50 Hz, not the generator's 14\.00 Hz/,
    );
    // The generator off for a step that plays a tone.
    expect(await refusal('recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: { ...at4Dbu(14), on: false }, readings: [{ channel: 1, reading: cubicAt14Hz(0.002) }], setup: SETUP })).toMatch(/not recorded/);
    expect([rows('step_results'), rows('measurements')]).toEqual(before);
  });

  it('makes the run unreadable when a failing measurement is hidden (as a damaged index hides a row), never reading the step as passed', async () => {
    const runId = await throughTheTrim('MG20-2611-0109');
    // a = 0.0112: H3 = 20·log10(0.0028/0.9916) ≈ −51.0 dBc, above the step's −52 dBc H3 limit but
    // within its −50 dB THD limit: one failing measurement beside a passing one.
    const failed = (await distortion(runId, 0.0112)).stepResults.at(-1)!;
    expect(failed.verdict).toBe('fail');
    expect(failed.measurements.map((m) => m.verdict).sort()).toEqual(['fail', 'pass']);
    station.close();
    const db = new Database(join(dir.path, DATABASE_FILE));
    db.exec('DROP TRIGGER measurements_never_deleted');
    db.prepare("DELETE FROM measurements WHERE step_result_id = ? AND verdict = 'fail'").run(failed.id);
    db.close();
    station = open();
    expect(() => station.records.getRun(runId)).toThrow(/Run \d+ \(serial MG20-2611-0109\) cannot be read/);
  });

  it('makes the run unreadable when a byte of a stored measurement changes', async () => {
    const runId = await throughTheTrim('MG20-2611-0108');
    await distortion(runId, 0.002);
    const serial = 'MG20-2611-0108';
    const written = JSON.stringify(station.records.getRun(runId));
    station.close();
    const pristine = readFileSync(join(dir.path, DATABASE_FILE));
    // "harmonicsDbc.H3" is stored only as a measurement's quantity; "H3" becomes "H2" in each copy of it.
    const needle = Buffer.from('harmonicsDbc.H3');
    const copies: number[] = [];
    for (let at = pristine.indexOf(needle); at >= 0; at = pristine.indexOf(needle, at + 1)) copies.push(at);
    expect(copies.length).toBeGreaterThan(0);
    let unreadable = 0;
    for (const at of copies) {
      const copy = tempDir('trimbench-steps-damaged-');
      try {
        cpSync(dir.path, copy.path, { recursive: true });
        const bytes = Buffer.from(pristine);
        bytes[at + needle.length - 1] = '2'.charCodeAt(0);
        writeFileSync(join(copy.path, DATABASE_FILE), bytes);
        const damaged = openStation({ dataDir: copy.path, stationName: 'bench-7', log: { record: () => '' } });
        try {
          expect(damaged.recordsProblem()).toBeNull();
          try {
            // A stale copy in a freed page changes nothing that is read.
            expect(JSON.stringify(damaged.records.getRun(runId))).toBe(written);
          } catch (error) {
            expect((error as Error).message).toMatch(new RegExp(`Run ${runId} \\(serial ${serial}\\) cannot be read: its stored measurement .* is damaged`));
            unreadable++;
          }
        } finally {
          damaged.close();
        }
      } finally {
        copy.remove();
      }
    }
    expect(unreadable).toBeGreaterThan(0);
    station = open();
  });

  it('names the lot and the station row on a run, and the database allows one unfinished run per unit', async () => {
    const detail = await openUnit('MG20-2611-0109', { lot: 'WO-2611-07' });
    expect(detail.run.lot).toBe('WO-2611-07');
    expect(station.db.prepare('SELECT stations.name FROM runs JOIN stations ON stations.id = runs.station_id WHERE runs.id = ?').get(detail.run.id)).toEqual({ name: 'bench-7' });
    // Written around the records code, straight into the table: the database itself refuses a second open run.
    const row = station.db.prepare('SELECT unit_id, procedure_id FROM runs WHERE id = ?').get(detail.run.id) as { unit_id: number; procedure_id: number };
    expect(() =>
      station.db
        .prepare("INSERT INTO runs (unit_id, procedure_id, operator, station, started_at, limit_thd_db) VALUES (?, ?, 'B. Tester', 'bench-7', '2026-12-02T10:00:00Z', -60)")
        .run(row.unit_id, row.procedure_id),
    ).toThrow(/already has an unfinished run/);
  });
});

describe('the step channels validate their payloads', () => {
  it('refuses step ids and readings outside their bounds before main looks at them', async () => {
    const runId = (await openUnit('MG20-2611-0110')).run.id;
    const reading = cubicAt14Hz(0.002);
    const bad: [string, unknown][] = [
      ['acknowledgeNotice', { runId, stepId: '' }],
      ['acknowledgeNotice', { runId, stepId: 'x'.repeat(41) }],
      ['acknowledgeNotice', { runId: 0, stepId: 'safety' }],
      ['completeTrim', { runId, stepId: 'lf-trim', extra: 1 }],
      ['recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [] }],
      ['recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [1, 2, 3].map((channel) => ({ channel, reading })) }],
      ['recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading }, { channel: 1, reading }] }],
      ['recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 17, reading }] }],
      ['recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: { ...at4Dbu(14), levelDbfs: 1 }, readings: [{ channel: 1, reading }] }],
      ['recordCheckStep', { runId, stepId: 'thd-14hz', stimulus: { ...at4Dbu(14), frequencyHz: 0 }, readings: [{ channel: 1, reading }] }],
      ['openRun', { serial: 'MG20-2611-0111', procedureId, operator: 'A. Tester', lot: 'x'.repeat(41) }],
    ];
    for (const [channel, payload] of bad) {
      const result = await dispatch(station.handlers, channel, payload, noCaller);
      expect(result.ok ? 'accepted' : result.error.name, `${channel} ${JSON.stringify(payload).slice(0, 120)}`).toBe('InvalidRequest');
    }
    expect(rows('step_results')).toBe(0);
  });
});

describe('the setup a run was calibrated with, checked at every reading (a calibration holds only for the setup it was made with: common practice)', () => {
  it('refuses a check step or trim point taken on another setup, or with none given, and stores nothing', async () => {
    const runId = await throughTheTrim('MG20-2611-0120');
    const step = { runId, stepId: 'thd-14hz', stimulus: at4Dbu(14), readings: [{ channel: 1, reading: cubicAt14Hz(0.002) }] };
    expect(await refusal('recordCheckStep', { ...step, setup: { ...SETUP, sampleRateHz: 44100 } })).toMatch(/the sample rate \(calibrated at 48000 Hz\)/);
    expect(await refusal('recordCheckStep', { ...step, setup: { ...SETUP, inputChannel: 1 } })).toMatch(/the input channel \(calibrated on 1\)/);
    expect(await refusal('recordCheckStep', step)).toMatch(/audio setup in use was not given/);
    expect(await refusal('recordTrimPoint', { runId, position: 4.7, reading: onPhasorLine(4.7, 5), live: STEADY_LIVE, stimulus: TRIM_STIMULUS, setup: { ...SETUP, outputDeviceId: 'out-2' } })).toMatch(/the output device/);
    expect(rows('step_results')).toBe(2); // the notice and the trim, nothing more
    expect((await call('recordCheckStep', { ...step, setup: SETUP })).stepResults.at(-1)!.stepId).toBe('thd-14hz');
    // A trim point, too, says its setup on a calibrated run.
    const other = (await openUnit('MG20-2611-0121')).run.id;
    await call('acknowledgeNotice', { runId: other, stepId: 'safety' });
    expect(await refusal('recordTrimPoint', { runId: other, position: 0, reading: onPhasorLine(0, 5), live: STEADY_LIVE, stimulus: TRIM_STIMULUS })).toMatch(/audio setup in use was not given/);
  });
});

/**
 * A two-channel unit: channel 1 comes in on input 1 (the calibrated one: −18 dBFS read for −20
 * played), channel 2 on input 2, whose gain knob sits 6 dB lower: the same loop reads −24 dBFS there.
 * Balance and crosstalk are then differences of dBu at the unit's outputs (the decibel's definition),
 * which a difference of the raw dBFS readings would get 6 dB wrong.
 */
describe('balance and crosstalk through two calibrated inputs', () => {
  const SETUP2 = { ...SETUP, secondInputChannel: 1 };
  const IN2_FS = -20 + OUT_FS + 24;
  /** The unit's answer at 1 kHz: `dbu1` at channel 1's output, `dbu2` at channel 2's. */
  const pair = (dbu1: number, dbu2: number, quietSecond = false) => [
    { channel: 1, reading: readingWithThd(-90, { fundamental: { frequencyHz: 1000, levelDbfs: dbu1 - IN_FS, phaseDeg: 0 }, harmonics: [{ order: 3, frequencyHz: 3000, levelDbc: -90, phaseDeg: 0 }] }) },
    { channel: 2, reading: readingWithThd(quietSecond ? -10 : -90, { fundamental: { frequencyHz: 1000, levelDbfs: dbu2 - IN2_FS, phaseDeg: 0 }, harmonics: [{ order: 3, frequencyHz: 3000, levelDbc: quietSecond ? -10 : -90, phaseDeg: 0 }] }) },
  ];

  async function twoChannelRun(serial: string, secondInput: object | null): Promise<number> {
    await call('recordCalibration', {
      operator: 'A. Tester',
      setup: secondInput ? SETUP2 : SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1000.2 },
      secondInput,
    });
    const file = JSON.parse(readFileSync(RESOURCE, 'utf8'));
    file.code = 'MG22-STEREO';
    file.revision = 'A';
    file.model = { ...file.model, channels: 2 };
    const common = { frequencyHz: 1000, level: { value: 4, unit: 'dBu' }, onFail: 'continue', instructions: ['Both channels connected as the step says.'] };
    file.steps = [
      ...file.steps.filter((s: { id: string }) => ['safety', 'lf-trim'].includes(s.id)),
      { ...common, id: 'balance', title: 'Balance at 1 kHz', kind: 'balance', channels: [1, 2], limits: { balanceDb: { low: -0.5, high: 0.5, unit: 'dB' } } },
      { ...common, id: 'crosstalk', title: 'Crosstalk 1 → 2', kind: 'crosstalk', channels: [1, 2], limits: { crosstalkDb: { high: -70, unit: 'dB' } } },
    ];
    const path = join(dir.path, 'stereo.json');
    writeFileSync(path, JSON.stringify(file));
    const imported = await call<{ id: number }>('importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
    const runId = (await call('openRun', { serial, procedureId: imported.id, operator: 'A. Tester', setup: secondInput ? SETUP2 : SETUP })).run.id;
    await call('acknowledgeNotice', { runId, stepId: 'safety' });
    await trim(runId);
    await call('completeTrim', { runId, stepId: 'lf-trim' });
    return runId;
  }

  it('reads each channel through its own input figure: 1 dB out of balance fails, 80 dB apart is −80 dB crosstalk', async () => {
    const runId = await twoChannelRun('MG20-2611-0201', { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 999.9 });
    const balance = await call('recordCheckStep', { runId, stepId: 'balance', stimulus: at4Dbu(1000), readings: pair(4, 3), setup: SETUP2 });
    const b = balance.stepResults.at(-1)!;
    expect(b.measurements[0].value).toBeCloseTo(-1, 9); // 3 dBu − 4 dBu, not the −7 dB of the raw dBFS
    expect(b.verdict).toBe('fail');
    const crosstalk = await call('recordCheckStep', { runId, stepId: 'crosstalk', stimulus: at4Dbu(1000), readings: pair(4, -76, true), setup: SETUP2 });
    const c = crosstalk.stepResults.at(-1)!;
    expect(c.measurements[0].value).toBeCloseTo(-80, 9);
    expect(c.verdict).toBe('pass');
  });

  it('refuses to compare channels when channel 2’s input has no figure, or the setup reads it on another input', async () => {
    const runId = await twoChannelRun('MG20-2611-0202', null);
    expect(await refusal('recordCheckStep', { runId, stepId: 'balance', stimulus: at4Dbu(1000), readings: pair(4, 4), setup: SETUP })).toMatch(/channel 2 has no level calibration/);
    expect(await refusal('recordCheckStep', { runId, stepId: 'balance', stimulus: at4Dbu(1000), readings: pair(4, 4), setup: SETUP2 })).toMatch(/channel 2 has no level calibration/);
    const calibrated = await twoChannelRun('MG20-2611-0203', { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 1000 });
    expect(await refusal('recordCheckStep', { runId: calibrated, stepId: 'balance', stimulus: at4Dbu(1000), readings: pair(4, 4), setup: { ...SETUP2, secondInputChannel: 3 } })).toMatch(/channel 2 has no level calibration/);
  });

  it('stores a second input only when the setup names it, by the same loopback rules as the first', async () => {
    const request = (setup: object, secondInput: object | null) => ({
      operator: 'A. Tester',
      setup,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -18, capturedHz: 1000.2 },
      secondInput,
    });
    expect(await refusal('recordCalibration', request(SETUP, { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 1000 }))).toMatch(/names no input for the unit's channel 2/);
    expect(await refusal('recordCalibration', request(SETUP2, null))).toMatch(/input 2, and that input was not measured/);
    expect(await refusal('recordCalibration', request(SETUP2, { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 50 }))).toMatch(/input 2 heard 50\.0 Hz/);
    expect(await refusal('recordCalibration', request({ ...SETUP, secondInputChannel: 0 }, { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 1000 }))).toMatch(/two different inputs/);
    // Read on another input than the setup names (the setup changed after the reading).
    expect(await refusal('recordCalibration', request(SETUP2, { channel: 3, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 1000 }))).toMatch(/read on input 4, but the setup reads the unit's channel 2 on input 2/);
    // A data-sheet figure for input 1 against a measured one for input 2: their difference would be the data sheet's error.
    expect(
      await refusal('recordCalibration', { ...request(SETUP2, { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 1000 }), input: { method: 'stated', statedEntry: '+18 dBu' } }),
    ).toMatch(/the first must be too/);
    const stored = await call<{ calibration: { secondInput: { channel: number; dbuAtFullScale: number } } }>('recordCalibration', request(SETUP2, { channel: 1, generatorDbfs: -20, capturedDbfs: -24, capturedHz: 1000 }));
    expect(stored.calibration.secondInput.channel).toBe(1);
    expect(stored.calibration.secondInput.dbuAtFullScale).toBeCloseTo(IN2_FS, 9);
  });
});
