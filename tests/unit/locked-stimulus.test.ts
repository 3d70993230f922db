// A locked (shared-clock) live meter analyses the generator's planned frequency coherently, but the
// reading must still carry the frequency actually in the signal, so that a tone that is not the
// generator's (a wrong channel, another source) is refused, not measured at the generator's bin.
// Expected values come from the construction of the test signals (tests/support/signals.ts).

import { describe, expect, it } from 'vitest';
import { planTestFrequency } from '../../shared/measurement/frequency-planner.ts';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { checkStimulus } from '../../shared/records/stimulus-check.ts';
import { tone } from '../support/signals.ts';

const RATE = 48000;
const BLOCK = 480;
const TRIM = DEMO_PROCEDURE.trim;
// The generator's coherent frequency for the demo procedure's 14 Hz step.
const PLAN = planTestFrequency({ targetHz: TRIM.stimulusHz, sampleRateHz: RATE, mainsHz: 50, harmonicCount: 10 });
const STIMULUS = { on: true, frequencyHz: PLAN.frequencyHz, levelDbfs: TRIM.stimulusLevelDbfs };
/** Inside the demo procedure's −15…−9 dBFS window, so only the frequency can tell the tones apart. */
const CAPTURED_DBFS = -12;
const H3_DBC = -60;

/** A locked, coherent live meter fed `seconds` of a tone at `frequencyHz` with H3 at −60 dBc. */
function lockedReading(frequencyHz: number, seconds = 8): Reading {
  const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: PLAN.frequencyHz, stimulusLocked: true, sampleGuard: false });
  const samples = tone(seconds * RATE, RATE, frequencyHz, 10 ** (CAPTURED_DBFS / 20), {
    phaseDeg: 20,
    partials: [{ order: 3, levelDbc: H3_DBC, phaseDeg: 0 }],
  });
  const block = new Float32Array(BLOCK);
  for (let at = 0; at + BLOCK <= samples.length; at += BLOCK) {
    block.set(samples.subarray(at, at + BLOCK));
    meter.push(block);
  }
  return meter.reading;
}

describe('a locked, coherent live meter reads the frequency in the signal', () => {
  it('the planned frequency is a whole number of cycles in the frame (so the meter runs coherent)', () => {
    expect(Number.isInteger(PLAN.cycles)).toBe(true);
    expect(lockedReading(PLAN.frequencyHz, 4).mode).toBe('coherent');
  });

  it('the generator’s own tone: accepted, measured at its frequency, THD as built', () => {
    const reading = lockedReading(PLAN.frequencyHz);
    // A noiseless tone: the peak search is good to ~1e-6 bin (0.73 Hz bins), far inside 1e-3 Hz.
    expect(Math.abs(reading.measuredFundamentalHz - PLAN.frequencyHz)).toBeLessThan(1e-3);
    expect(reading.fundamental.frequencyHz).toBe(PLAN.frequencyHz);
    expect(Math.abs(reading.fundamental.levelDbfs - CAPTURED_DBFS)).toBeLessThan(0.05);
    // Only H3 was built in, at −60 dBc, so THD = −60 dB (definition of THD).
    expect(Math.abs(reading.thdDb - H3_DBC)).toBeLessThan(0.1);
    expect(reading.settled).toBe(true);
    expect(checkStimulus(reading, STIMULUS, TRIM)).toEqual({ ok: true });
  });

  for (const offPercent of [5, 10]) {
    it(`a foreign tone ${offPercent} % off at the expected level: measured there, refused as the wrong frequency`, () => {
      const foreignHz = PLAN.frequencyHz * (1 + offPercent / 100);
      const reading = lockedReading(foreignHz);
      expect(Math.abs(reading.measuredFundamentalHz - foreignHz)).toBeLessThan(1e-3);
      expect(checkStimulus(reading, STIMULUS, TRIM)).toMatchObject({ ok: false, problem: 'wrong-frequency' });
    });
  }

  it('a foreign tone 5 % below: refused too', () => {
    const foreignHz = PLAN.frequencyHz * 0.95;
    const reading = lockedReading(foreignHz);
    expect(Math.abs(reading.measuredFundamentalHz - foreignHz)).toBeLessThan(1e-3);
    expect(checkStimulus(reading, STIMULUS, TRIM)).toMatchObject({ ok: false, problem: 'wrong-frequency' });
  });
});
