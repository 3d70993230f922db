// The demo line as a person or a script runs it: `demo-line --json` in a child process on a fresh
// data folder, its output checked against the procedure file as written (read here as plain JSON,
// not through the project's parser), against what each unit's invented component values give by
// the simulated stage's physics (its true null, gain, noise, hum and driver distortion, derived
// here by hand), and against the station database opened read-only.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { demoBatch } from '../../shared/sim/demo-batch.ts';
import { DEMO_INTERFACE_DBU_AT_FULL_SCALE } from '../../shared/sim/demo-chain.ts';
import type { DemoUnitParameters } from '../../shared/sim/demo-unit.ts';
import { aWeightedWhiteNoiseDb } from '../support/signals.ts';
import { expectedMaskMarginDb, expectedMaxLevelDbu, expectedRinging } from '../support/demo-physics.ts';
import { tempDir } from '../support/station.ts';

const CLI = fileURLToPath(new URL('../../cli/trimbench.ts', import.meta.url));
const PROCEDURE = JSON.parse(readFileSync(fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)), 'utf8'));
const run = (...args: string[]) => spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: 240_000 });

// Six defects in turn on every fifth unit (units 4, 9, 14, 19, 24, 29): 30 units meet each once.
const UNITS = 30;
const SEED = 20611;

interface LineJson {
  units: {
    serial: string;
    verdict: 'pass' | 'fail';
    trim: { finalPosition: number | null; trueNullPosition: number; points: number };
    steps: { id: string; kind: string; verdict: string; measurements: { quantity: string; value: number | null; unit: string; low: number | null; high: number | null }[] }[];
  }[];
  passed: number;
  failed: number;
}

let folder: ReturnType<typeof tempDir>;
let first: ReturnType<typeof run>;
let line: LineJson;

beforeAll(() => {
  folder = tempDir('trimbench-line-');
  first = run('demo-line', '--units', String(UNITS), '--data', folder.path, '--seed', String(SEED), '--json');
  line = JSON.parse(first.stdout);
}, 240_000);
afterAll(() => folder.remove());

/** The step as the procedure file states it. */
const stepOf = (id: string) => PROCEDURE.steps.find((s: { id: string }) => s.id === id);
/**
 * A limit by its stored quantity name ("thdDb", "harmonicsDbc.H3"), from the file's step: a check's
 * `limits`, or the trim's THD limit at its final point (`limitThdDb`, in dB).
 */
function limitOf(stepId: string, quantity: string): { low?: number; high?: number; unit: string } | undefined {
  const step = stepOf(stepId);
  if (step.kind === 'trim') return quantity === 'thdDb' ? { high: step.limitThdDb, unit: 'dB' } : undefined;
  // docs/procedures.md, `response`: the mask's margin is judged against low 0 dB (inside the mask).
  if (step.kind === 'response' && quantity === 'maskMarginDb') return { low: 0, unit: 'dB' };
  return quantity.split('.').reduce((at: Record<string, unknown> | undefined, key) => at?.[key] as Record<string, unknown> | undefined, step.limits) as
    | { low?: number; high?: number; unit: string }
    | undefined;
}

/** Every quantity the file states a limit for in a step, as measurements name them. */
function statedQuantities(step: { kind: string; limits?: Record<string, object> }): string[] {
  if (step.kind === 'trim') return ['thdDb'];
  if (step.kind === 'response') return ['maskMarginDb', ...Object.keys(step.limits?.harmonicsDbc ?? {}).map((h) => `harmonicsDbc.${h}`)];
  return Object.entries(step.limits ?? {}).flatMap(([key, value]) => ('unit' in value ? [key] : Object.keys(value).map((h) => `${key}.${h}`)));
}

// ---- what a unit's invented parameters must give, by the stage's physics -------------------------
//
// The demo unit (shared/sim/demo-unit.ts, its circuit as the file describes it): the driver gives
// G·V·(x + d₂·x² − d₃·x³) + noise for an input x in full-scale units, the loop's series resistance
// R_w + R_s is cancelled by the trimmer's k·p, and the output is read in full-scale units of V.
// The demo line's station is calibrated on the invented interface: +18 dBu at full scale, output
// and input (a unity loop). What follows is derived by hand from that; the labels the batch puts
// on its units are never used to decide what a unit must fail.

const FULL_SCALE_DBU = DEMO_INTERFACE_DBU_AT_FULL_SCALE;

/** The values a unit's parameters give at the steps where the physics can be done by hand. */
function expectedValues(p: DemoUnitParameters) {
  // The working level (+4 dBu) as the peak of x: a sine's dBFS is its peak (AES17).
  const peak = 10 ** ((4 - FULL_SCALE_DBU) / 20);
  // Fourier series: x² = A²/2·(1 + cos 2ωt) gives H2 = d₂·A/2 of the fundamental, x³ = A³/4·(3 cos ωt
  // + cos 3ωt) gives H3 = d₃·A²/4. The core's magnetising current is odd in the flux, so H2 comes
  // from the driver alone; at 1 kHz the flux, and with it the core's share, is 1/70 of 14 Hz's.
  const h2 = (p.driverSquare * peak) / 2;
  const h3 = (p.driverCubic * peak * peak) / 4;
  // Noise: the driver's RMS volts over V, white to Nyquist, with the converter's own; the step's
  // 22 Hz–22 kHz of the 24 kHz at 48 kHz, A-weighted (IEC 61672-1), as a sine's dBFS (×√2) in dBu.
  const noiseFs = Math.hypot(p.driverNoiseVolts / p.driveVoltsPerFullScale, p.inputNoiseFullScale);
  return {
    // At the trimmed null the net series resistance is gone, and the 10 kΩ load sees the driver's
    // voltage: the gain is the driver's own (the coupling capacitor is a fraction of an ohm at 1 kHz).
    gainDb: 20 * Math.log10(p.driverGain),
    driverH2Dbc: 20 * Math.log10(h2),
    driverThdDb: 10 * Math.log10(h2 * h2 + h3 * h3),
    noiseADbu: 20 * Math.log10(noiseFs * Math.SQRT2) + 10 * Math.log10((22000 - 22) / 24000) + aWeightedWhiteNoiseDb(22, 22000) + FULL_SCALE_DBU,
    // One mains sine at the output: the hum step's value is it (read, or a bound above it).
    humDbu: p.humDbfs + FULL_SCALE_DBU,
    nullTurns: (p.windingOhms + p.sourceOhms) / p.compensationOhmsPerTurn,
  };
}

/**
 * The steps whose limits a unit's parameters break for certain, in the file's order, each with why.
 * The core's own distortion after the trim (at 14, 20 and 50 Hz) depends on where the assistant
 * leaves the trimmer and on the saturating loop: it is not derivable by hand, so only the driver's
 * H2, which that distortion can only add to in power, is held against those steps' limits.
 */
function predictedBreaks(p: DemoUnitParameters): { stepId: string; why: string }[] {
  const v = expectedValues(p);
  const breaks: { stepId: string; why: string }[] = [];
  for (const step of PROCEDURE.steps) {
    const high = (key: string) => step.limits?.[key]?.high as number | undefined;
    if (step.kind === 'trim' && v.nullTurns > step.positionMax) breaks.push({ stepId: step.id, why: `its null at ${v.nullTurns.toFixed(2)} turns lies past the trimmer's end (${step.positionMax})` });
    if (step.kind === 'distortion') {
      const h2Limit = step.limits.harmonicsDbc?.H2?.high as number | undefined;
      if ((high('thdDb') !== undefined && v.driverH2Dbc > high('thdDb')!) || (h2Limit !== undefined && v.driverH2Dbc > h2Limit)) {
        breaks.push({ stepId: step.id, why: `the driver's H2 alone is ${v.driverH2Dbc.toFixed(1)} dBc` });
      }
    }
    // Gain and noise past their limits by more than the tolerance they are checked to below.
    if (step.kind === 'gain' && (v.gainDb < step.limits.gainDb.low - 0.1 || v.gainDb > step.limits.gainDb.high + 0.1)) breaks.push({ stepId: step.id, why: `its gain is ${v.gainDb.toFixed(2)} dB` });
    if (step.kind === 'noise' && v.noiseADbu > high('noiseDbu')! + 1) breaks.push({ stepId: step.id, why: `its noise is ${v.noiseADbu.toFixed(1)} dBu` });
    if (step.kind === 'hum' && v.humDbu > high('humDbu')! + 1) breaks.push({ stepId: step.id, why: `its hum is ${v.humDbu.toFixed(1)} dBu` });
    // Past the trim's null the net resistance is between 0 and one trimmer step's worth: both ends
    // must leave the mask (by more than the sweep's reading of it scatters) for a certain break.
    if (step.kind === 'response') {
      const worst = Math.max(expectedMaskMarginDb(p, 0, stepOf('response')), expectedMaskMarginDb(p, p.compensationOhmsPerTurn * stepOf('lf-trim').positionStep, stepOf('response')));
      if (worst < -0.05) breaks.push({ stepId: step.id, why: `its response leaves the mask by ${(-worst).toFixed(2)} dB` });
    }
    if (step.kind === 'max-level' && expectedMaxLevelDbu(p, step.thdnThresholdPercent, FULL_SCALE_DBU) < step.limits.maxLevelDbu.low - 0.3) breaks.push({ stepId: step.id, why: 'its maximum level is under the limit' });
    if (step.kind === 'ringing') {
      const r = expectedRinging(p);
      // Clear of the limits by more than an 8-bit scope record reads them to.
      if (r.dampingRatio < step.limits.dampingRatio.low - 0.05) breaks.push({ stepId: step.id, why: `its damping ratio is ${r.dampingRatio.toFixed(2)}` });
      else if (r.overshootPercent > step.limits.overshootPercent.high + 2) breaks.push({ stepId: step.id, why: `its overshoot is ${r.overshootPercent.toFixed(0)} %` });
    }
  }
  return breaks;
}

describe('demo-line --json', () => {
  it('prints one object of the stated shape, with serials of the procedure’s pattern', () => {
    expect(first.status).toBe(0);
    expect(first.stderr).toBe('');
    expect(first.stdout.trim().split('\n')).toHaveLength(1);
    expect(Object.keys(line).sort()).toEqual(['failed', 'passed', 'units']);
    expect(line.units).toHaveLength(UNITS);
    const pattern = new RegExp(PROCEDURE.serial.pattern);
    for (const unit of line.units) {
      expect(Object.keys(unit).sort()).toEqual(['serial', 'steps', 'trim', 'verdict']);
      expect(unit.serial).toMatch(pattern);
      expect(['pass', 'fail']).toContain(unit.verdict);
      expect(Object.keys(unit.trim).sort()).toEqual(['finalPosition', 'points', 'trueNullPosition']);
      // Every step of the file, in its order.
      expect(unit.steps.map((s) => s.id)).toEqual(PROCEDURE.steps.map((s: { id: string }) => s.id));
      for (const step of unit.steps) {
        expect(Object.keys(step).sort()).toEqual(['id', 'kind', 'measurements', 'verdict']);
        expect(step.kind).toBe(stepOf(step.id).kind);
        for (const m of step.measurements) expect(Object.keys(m).sort()).toEqual(['high', 'low', 'quantity', 'unit', 'value']);
      }
    }
    expect(new Set(line.units.map((u) => u.serial)).size).toBe(UNITS);
    expect(line.passed).toBe(line.units.filter((u) => u.verdict === 'pass').length);
    expect(line.passed + line.failed).toBe(UNITS);
  });

  it('leaves every trimmed unit on the safe side of its true null, within one trimmer step of it', () => {
    // The true null from the component values, by the stage's physics (shared/sim/demo-unit.ts):
    // the compensation cancels the loop's series resistance, R_w + R_s − k·p = 0, at p = (R_w + R_s)/k.
    // The tolerance is the procedure's own trimmer step (positionStep in the file): the finest
    // setting it asks of the technician, and the file's "toward more compensation" from the safe
    // end means a final setting past the null is over-compensation (design notes §10: a PASS
    // needs the trimmer on the safe side of the null).
    const trim = stepOf('lf-trim');
    const batch = demoBatch(UNITS, SEED);
    let trimmed = 0;
    for (const [i, unit] of line.units.entries()) {
      const p = batch[i].parameters;
      const trueNull = (p.windingOhms + p.sourceOhms) / p.compensationOhmsPerTurn;
      expect(unit.trim.trueNullPosition).toBeCloseTo(trueNull, 9);
      if (unit.steps.find((s) => s.id === 'lf-trim')!.verdict !== 'pass') continue;
      trimmed++;
      expect(unit.trim.finalPosition).not.toBeNull();
      expect(trueNull - unit.trim.finalPosition!).toBeGreaterThanOrEqual(0);
      expect(trueNull - unit.trim.finalPosition!).toBeLessThanOrEqual(trim.positionStep);
    }
    // Only the unit with the wrong trimmer (its null beyond the trimmer's end) cannot be trimmed.
    expect(trimmed).toBe(UNITS - 1);
  });

  it('fails each unit whose invented parameters break a limit at the first step the physics says they break', () => {
    const batch = demoBatch(UNITS, SEED);
    const firstBreaks: string[] = [];
    for (const unit of batch) {
      const report = line.units[unit.index];
      const predicted = predictedBreaks(unit.parameters);
      // The batch's own label must agree with the physics (it is not what the test expects).
      expect(unit.defect?.stepId ?? null, `${report.serial}: label against the parameters`).toBe(predicted[0]?.stepId ?? null);
      if (predicted.length === 0) continue;
      const first = predicted[0];
      firstBreaks.push(first.stepId);
      expect(report.verdict, `${report.serial}: ${first.why}`).toBe('fail');
      const failedFirst = report.steps.find((s) => s.verdict === 'fail');
      expect(failedFirst?.id, `${report.serial}: ${first.why}`).toBe(first.stepId);
      // A failure whose step says "stop" ends the run there (the file's onFail).
      if (stepOf(first.stepId).onFail === 'stop') {
        const after = report.steps.slice(report.steps.findIndex((s) => s.id === first.stepId) + 1);
        expect(after.every((s) => s.verdict === 'not-run')).toBe(true);
      }
    }
    // Every fifth unit is built wrong (units 4, 9, 14, 19, 24, 29), each way once in 30 units.
    expect(firstBreaks.sort()).toEqual(['gain-1khz', 'hum', 'lf-trim', 'noise-a', 'ringing-20k', 'thd-1khz']);
  });

  it('measures what each unit’s invented parameters give, where the stage’s physics gives it by hand', () => {
    const batch = demoBatch(UNITS, SEED);
    let compared = 0;
    for (const unit of batch) {
      const report = line.units[unit.index];
      const expected = expectedValues(unit.parameters);
      const stored = (stepId: string, quantity: string) => report.steps.find((s) => s.id === stepId)?.measurements.find((m) => m.quantity === quantity)?.value ?? null;
      const near = (stepId: string, quantity: string, value: number, tolerance: number) => {
        const got = stored(stepId, quantity);
        if (got === null) return; // not run: the run stopped before it
        expect(Math.abs(got - value), `${report.serial} ${stepId} ${quantity}: ${got} against ${value.toFixed(2)}`).toBeLessThan(tolerance);
        compared++;
      };
      // Tolerances: gain to 0.1 dB (the trimmed stage's leftover series resistance moves it by
      // thousandths); noise and hum to 1 dB (a settled reading of noise scatters by tenths).
      near('gain-1khz', 'gainDb', expected.gainDb, 0.1);
      near('noise-a', 'noiseDbu', expected.noiseADbu, 1);
      near('hum', 'humDbu', expected.humDbu, 1);
      // The response's margin inside the mask, from the circuit with the trimmer where the
      // technician left it (the net resistance R0 − k·p): to 0.05 dB, the sweep's reading of a
      // smooth response (the response step's own tests recover analytic filters to 0.05 dB).
      const final = report.trim.finalPosition;
      if (final !== null) near('response', 'maskMarginDb', expectedMaskMarginDb(unit.parameters, unit.parameters.windingOhms + unit.parameters.sourceOhms - unit.parameters.compensationOhmsPerTurn * final, stepOf('response')), 0.05);
      // The soft clip's crossing: to 0.2 dB, the straight line between 1 dB steps in dB of THD+N
      // against the steeply bending curve (a gain-defect unit reaches the ceiling first: a lower bound).
      if (unit.parameters.driverGain > 10 ** (-0.5 / 20)) near('max-level-1khz', 'maxLevelDbu', expectedMaxLevelDbu(unit.parameters, stepOf('max-level-1khz').thdnThresholdPercent, FULL_SCALE_DBU), 0.2);
      // Ringing to what an 8-bit record with half a code of noise reads (the ringing analysis's tests).
      const ring = expectedRinging(unit.parameters);
      near('ringing-20k', 'ringFrequencyHz', ring.ringFrequencyHz, 0.03 * ring.ringFrequencyHz);
      near('ringing-20k', 'dampingRatio', ring.dampingRatio, 0.03);
      near('ringing-20k', 'overshootPercent', ring.overshootPercent, 1.5);
      // Where the driver's even-order term sets the distortion, 1 kHz THD is its H2 (0.5 dB); at
      // the lower frequencies the core's own odd harmonics add to it, so THD is at least that H2.
      if (unit.parameters.driverSquare !== 0) {
        near('thd-1khz', 'thdDb', expected.driverThdDb, 0.5);
        for (const id of ['thd-14hz', 'thd-20hz', 'thd-50hz']) {
          const thd = stored(id, 'thdDb');
          if (thd !== null) expect(thd, `${report.serial} ${id}`).toBeGreaterThan(expected.driverH2Dbc - 0.5);
        }
      }
    }
    expect(compared).toBeGreaterThan(UNITS * 6);
  });

  it('passes no unit whose stored measurements break a limit of the procedure file', () => {
    let checked = 0;
    for (const unit of line.units) {
      for (const step of unit.steps) {
        for (const m of step.measurements) {
          // The limits stored with each measurement are the file's, bound for bound.
          const limit = limitOf(step.id, m.quantity);
          expect(limit, `${step.id} ${m.quantity}`).toBeDefined();
          expect(m.low).toBe(limit!.low ?? null);
          expect(m.high).toBe(limit!.high ?? null);
          expect(m.unit).toBe(limit!.unit);
          // Limits are inclusive (docs/procedures.md): low ≤ value ≤ high.
          const inside = m.value !== null && (limit!.low === undefined || m.value >= limit!.low) && (limit!.high === undefined || m.value <= limit!.high);
          if (step.verdict === 'pass') expect(inside, `${unit.serial} ${step.id} ${m.quantity} = ${m.value}`).toBe(true);
          if (!inside) expect(step.verdict).toBe('fail');
          checked++;
        }
      }
      if (unit.verdict !== 'pass') continue;
      // A PASS rests on every step, each check with a measurement of every limit the file states.
      for (const step of unit.steps) {
        expect(step.verdict, `${unit.serial} ${step.id}`).toBe('pass');
        expect(step.measurements.map((m) => m.quantity).sort()).toEqual(statedQuantities(stepOf(step.id)).sort());
      }
    }
    expect(checked).toBeGreaterThan(UNITS * 5);
  });

  it('writes each unit’s run, finished with its verdict, into the station database', () => {
    const db = new Database(join(folder.path, 'trimbench.sqlite'), { readonly: true, fileMustExist: true });
    try {
      const rows = db
        .prepare('SELECT u.serial, r.verdict, r.finished_at, (SELECT COUNT(*) FROM trim_points p WHERE p.run_id = r.id) AS points FROM runs r JOIN units u ON u.id = r.unit_id')
        .all() as { serial: string; verdict: string; finished_at: string | null; points: number }[];
      const bySerial = new Map(rows.map((r) => [r.serial, r]));
      expect(rows).toHaveLength(UNITS);
      for (const unit of line.units) {
        const row = bySerial.get(unit.serial);
        expect(row?.finished_at).not.toBeNull();
        expect(row?.verdict).toBe(unit.verdict);
        expect(row?.points).toBe(unit.trim.points);
      }
    } finally {
      db.close();
    }
  });

  it('run again on the same folder, takes serials no unit there has, and says what is wrong with bad arguments', () => {
    const again = run('demo-line', '--units', '2', '--data', folder.path, '--seed', String(SEED), '--json');
    expect(again.status).toBe(0);
    const serials = (JSON.parse(again.stdout) as LineJson).units.map((u) => u.serial);
    expect(serials).toHaveLength(2);
    for (const serial of serials) expect(line.units.map((u) => u.serial)).not.toContain(serial);

    for (const [args, said] of [
      [['--units', '0', '--data', folder.path], /--units must be a whole number of units from 1 to 9999/],
      [['--units', '2'], /needs --data DIR/],
      [['--data', folder.path], /needs --units N/],
      [['--units', '2', '--data', folder.path, '--seed', '1.5'], /--seed must be a whole number/],
    ] as [string[], RegExp][]) {
      const refused = run('demo-line', ...args);
      expect(refused.status).toBe(1);
      expect(refused.stdout).toBe('');
      expect(refused.stderr).toMatch(said);
    }
  });
});
