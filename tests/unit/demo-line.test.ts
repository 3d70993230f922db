// The demo line as a person or a script runs it: `demo-line --json` in a child process on a fresh
// data folder, its output checked against the procedure file as written (read here as plain JSON,
// not through the project's parser), against each unit's true null computed here from its
// component values, and against the station database opened read-only.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { demoBatch } from '../../shared/sim/demo-batch.ts';
import { tempDir } from '../support/station.ts';

const CLI = fileURLToPath(new URL('../../cli/trimbench.ts', import.meta.url));
const PROCEDURE = JSON.parse(readFileSync(fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)), 'utf8'));
const run = (...args: string[]) => spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: 120_000 });

// Five defects in turn on every fifth unit (units 4, 9, 14, 19, 24): 25 units meet each once.
const UNITS = 25;
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
}, 120_000);
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
  return quantity.split('.').reduce((at: Record<string, unknown> | undefined, key) => at?.[key] as Record<string, unknown> | undefined, step.limits) as
    | { low?: number; high?: number; unit: string }
    | undefined;
}

/** Every quantity the file states a limit for in a step, as measurements name them. */
function statedQuantities(step: { kind: string; limits?: Record<string, object> }): string[] {
  if (step.kind === 'trim') return ['thdDb'];
  return Object.entries(step.limits ?? {}).flatMap(([key, value]) => ('unit' in value ? [key] : Object.keys(value).map((h) => `${key}.${h}`)));
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

  it('fails each unit built out of limits at the step that measures what is wrong with it', () => {
    const batch = demoBatch(UNITS, SEED);
    const defective = batch.filter((u) => u.defect !== null);
    // Each way of building a unit wrong comes once in this batch.
    expect(defective.map((u) => u.defect!.stepId).sort()).toEqual(['gain-1khz', 'hum', 'lf-trim', 'noise-a', 'thd-1khz']);
    for (const unit of defective) {
      const report = line.units[unit.index];
      expect(report.verdict, `${report.serial}: ${unit.defect!.what}`).toBe('fail');
      const failedFirst = report.steps.find((s) => s.verdict === 'fail');
      expect(failedFirst?.id, `${report.serial}: ${unit.defect!.what}`).toBe(unit.defect!.stepId);
      // A failure whose step says "stop" ends the run there (the file's onFail).
      if (stepOf(unit.defect!.stepId).onFail === 'stop') {
        const after = report.steps.slice(report.steps.findIndex((s) => s.id === unit.defect!.stepId) + 1);
        expect(after.every((s) => s.verdict === 'not-run')).toBe(true);
      }
    }
    // The wrong trimmer's null lies past the trimmer's end, which is why its trim fails.
    const wrongTrimmer = defective.find((u) => u.defect!.stepId === 'lf-trim')!;
    expect(line.units[wrongTrimmer.index].trim.trueNullPosition).toBeGreaterThan(stepOf('lf-trim').positionMax);
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
