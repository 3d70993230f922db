// The demo bench's scope records (shared/sim/demo-scope.ts): what an oscilloscope across the
// invented unit's load exports while a square wave drives it. Its figures are held to the textbook
// second-order results (Ogata, Modern Control Engineering, the transient response of second-order
// systems: overshoot exp(−ζπ/√(1−ζ²)), ringing at fn·√(1−ζ²)), and its amplitude to the dBu's
// definition (0 dBu = 0.7746 V RMS, common practice); the example record shipped in resources/demo
// is held to the function's output.

import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { judgeScopeRecord } from '../../shared/procedures/ringing.ts';
import type { RingingStep } from '../../shared/procedures/procedure-file.ts';
import { readScopeCsv } from '../../shared/scope/scope-csv.ts';
import { demoBatch } from '../../shared/sim/demo-batch.ts';
import { DEMO_EXAMPLE_RECORD, demoScopeRecordText } from '../../shared/sim/demo-scope.ts';
import { DEMO_UNIT_PARAMETERS } from '../../shared/sim/demo-unit.ts';
import { settlingFromFormula, textbookOvershoot, textbookRingHz } from '../support/step-response.ts';

const PROCEDURE = JSON.parse(readFileSync(fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)), 'utf8'));
const RINGING: RingingStep = PROCEDURE.steps.find((s: { kind: string }) => s.kind === 'ringing');
const EXAMPLE = fileURLToPath(new URL('../../resources/demo/mg20-demo-scope-20khz.csv', import.meta.url));

const value = (outcome: ReturnType<typeof judgeScopeRecord>, quantity: string) => {
  if (!outcome.ok) throw new Error(outcome.refusal);
  return outcome.measurements.find((m) => m.quantity === quantity)!.value!;
};

describe('the demo unit’s scope record', () => {
  it('the example in resources/demo is the nominal unit’s record at the demo procedure’s ringing step (regenerate with node scripts/demo-scope-record.ts)', () => {
    expect(DEMO_EXAMPLE_RECORD.squareHz).toBe(RINGING.squareHz);
    expect(RINGING.level).toEqual({ value: DEMO_EXAMPLE_RECORD.levelDbu, unit: 'dBu' });
    expect(readFileSync(EXAMPLE, 'utf8')).toBe(demoScopeRecordText(DEMO_UNIT_PARAMETERS, DEMO_EXAMPLE_RECORD));
  });

  it('rings as the textbook second-order system of the unit’s natural frequency and damping, and passes the demo procedure’s ringing limits', () => {
    const system = { zeta: DEMO_UNIT_PARAMETERS.hfDampingRatio, naturalHz: DEMO_UNIT_PARAMETERS.hfNaturalHz };
    const outcome = judgeScopeRecord(RINGING, readFileSync(EXAMPLE, 'utf8'), 'mg20-demo-scope-20khz.csv');
    expect(outcome.ok && outcome.verdict).toBe('pass');
    // Tolerances as the ringing analysis's own tests hold an 8-bit record with half a code of noise.
    expect(Math.abs(value(outcome, 'ringFrequencyHz') / textbookRingHz(system) - 1)).toBeLessThan(0.02);
    expect(Math.abs(value(outcome, 'dampingRatio') - system.zeta)).toBeLessThan(0.03);
    expect(Math.abs(value(outcome, 'overshootPercent') - 100 * textbookOvershoot(system.zeta))).toBeLessThan(1);
    expect(Math.abs(value(outcome, 'settlingTimeS') / settlingFromFormula(system, 0.02) - 1)).toBeLessThan(0.15);
  });

  it('swings between the square’s flat tops: ±√2 × 0.7746 V for 0 dBu at the unit’s gain (the dBu’s definition)', () => {
    const record = readScopeCsv(readFileSync(EXAMPLE, 'utf8'));
    const values = record.channels[0].values;
    const sorted = Float64Array.from(values).sort();
    // Settled flat tops dominate the record: its 10th and 90th percentiles lie on them.
    const low = sorted[Math.floor(0.1 * sorted.length)];
    const high = sorted[Math.floor(0.9 * sorted.length)];
    const peak = Math.SQRT2 * 0.7746 * DEMO_UNIT_PARAMETERS.driverGain;
    expect(Math.abs(high - peak) / peak).toBeLessThan(0.02);
    expect(Math.abs(low + peak) / peak).toBeLessThan(0.02);
    expect(record.sampleIntervalS).toBeCloseTo(20e-9, 15);
  });

  it('a unit whose damping the textbook puts past the step’s limits fails the ringing step on them; one within them passes', () => {
    const limit = RINGING.limits.dampingRatio!.low!;
    const overshootLimit = RINGING.limits.overshootPercent!.high!;
    let failing = 0;
    let passing = 0;
    for (const unit of demoBatch(30, 20611)) {
      const p = unit.parameters;
      const outcome = judgeScopeRecord(RINGING, demoScopeRecordText(p, { ...DEMO_EXAMPLE_RECORD, seed: unit.noiseSeed }), 'unit.csv');
      if (!outcome.ok) throw new Error(outcome.refusal);
      // Clear of the limits by more than the tolerances above, so the verdict is the physics'.
      const overshoot = 100 * textbookOvershoot(p.hfDampingRatio);
      if (p.hfDampingRatio < limit - 0.05 && overshoot > overshootLimit + 2) {
        expect(outcome.verdict).toBe('fail');
        failing++;
      } else if (p.hfDampingRatio > limit + 0.05 && overshoot < overshootLimit - 2 && settlingFromFormula({ zeta: p.hfDampingRatio, naturalHz: p.hfNaturalHz }, 0.02) < 0.85 * RINGING.limits.settlingTimeS!.high!) {
        expect(outcome.verdict, `unit ${unit.index}`).toBe('pass');
        passing++;
      }
    }
    expect(failing).toBe(1);
    expect(passing).toBeGreaterThan(25);
  });
});
