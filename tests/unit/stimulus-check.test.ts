// Is the reading the unit's answer to the stimulus? Checked against the simulated MG-20 (invented;
// shared/sim/demo-unit.ts) run through the live meter at 48 kHz, and against signals built by hand.

import { describe, expect, it } from 'vitest';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { procedureSchema } from '../../shared/procedures/procedure.ts';
import { checkStimulus, checkStimulusSetting } from '../../shared/records/stimulus-check.ts';
import { DemoUnit } from '../../shared/sim/demo-unit.ts';
import { readingWithThd } from '../support/station.ts';

const TRIM = DEMO_PROCEDURE.trim;
const STIMULUS = { on: true, frequencyHz: TRIM.stimulusHz, levelDbfs: TRIM.stimulusLevelDbfs };
const RATE = 48000;

/** The demo unit at a trimmer setting, read by the live meter after it has settled there. */
function demoReadingAt(turns: number): Reading {
  const unit = new DemoUnit(RATE);
  unit.setStimulus(STIMULUS);
  const meter = new LiveMeter({ sampleRateHz: RATE, expectedFundamentalHz: STIMULUS.frequencyHz, sampleGuard: false });
  const block = new Float32Array(480);
  const run = (seconds: number) => {
    for (let i = 0; i < (seconds * RATE) / block.length; i++) {
      unit.render(block);
      meter.push(block);
    }
  };
  run(6); // the coupling capacitor's power-up transient dies away at the safe end
  unit.setTrimmer(turns);
  run(6);
  return meter.reading;
}

describe('checkStimulus on the demo bench', () => {
  // The window must hold the unit at any trimmer setting short of oscillation: from the safe end,
  // through the simulator's true null (130 Ω / 26 Ω per turn = 5 turns, its construction), to a
  // turn past it (it breaks into oscillation near 6.5 turns).
  for (const turns of [0, 2.5, 4.75, 5, 5.25, 6]) {
    it(`accepts the unit's answer at ${turns} turns`, () => {
      expect(checkStimulus(demoReadingAt(turns), STIMULUS, TRIM)).toEqual({ ok: true });
    });
  }

  it('refuses a reading taken with the generator playing a square wave: the meter reads sines (a square’s third harmonic at 1/3, −9.5 dB, would read as distortion; Fourier series of a square)', () => {
    const reading = demoReadingAt(4.75);
    expect(checkStimulus(reading, STIMULUS, TRIM).ok).toBe(true);
    const square = { ...STIMULUS, waveform: 'square' as const };
    const check = checkStimulus(reading, square, TRIM);
    expect(check.ok ? null : check.problem).toBe('not-sine');
    expect(checkStimulusSetting(square, TRIM)).toMatch(/square wave.*needs a sine/);
    expect(checkStimulusSetting({ ...STIMULUS, waveform: 'sine' }, TRIM)).toBeNull();
  });

  it('refuses the unit’s answer with the generator off, whatever the capture shows', () => {
    const check = checkStimulus(demoReadingAt(0), { ...STIMULUS, on: false }, TRIM);
    expect(check).toMatchObject({ ok: false, problem: 'generator-off' });
  });

  it('refuses the same capture 16 dB low (finding 1: −28 dBFS for a −12 dBFS stimulus)', () => {
    const reading = demoReadingAt(0);
    const low = { ...reading, fundamental: { ...reading.fundamental, levelDbfs: reading.fundamental.levelDbfs - 16 } };
    const check = checkStimulus(low, STIMULUS, TRIM);
    expect(check).toMatchObject({ ok: false, problem: 'level-low' });
    expect(!check.ok && check.message).toMatch(/capture channel.*powered.*input gain/);
  });
});

describe('checkStimulus on built readings', () => {
  it('refuses a tone that is not the generator’s, naming the likely causes', () => {
    // Finding 1: the captured fundamental at 15.477 Hz, −28 dBFS, for a 14 Hz stimulus.
    const reading = readingWithThd(-90, { fundamental: { frequencyHz: 15.477, levelDbfs: -28, phaseDeg: 0 } });
    const check = checkStimulus(reading, STIMULUS, TRIM);
    expect(check).toMatchObject({ ok: false, problem: 'wrong-frequency' });
    expect(!check.ok && check.message).toMatch(/15\.48 Hz, not the generator's 14\.00 Hz.*capture channel/);
  });

  it('holds the frequency to the procedure’s tolerance (1 % of 14 Hz = 0.14 Hz, invented demo value)', () => {
    const at = (frequencyHz: number) => checkStimulus(readingWithThd(-70, { fundamental: { frequencyHz, levelDbfs: -12, phaseDeg: 0 } }), STIMULUS, TRIM);
    expect(at(14.13).ok).toBe(true);
    expect(at(13.87).ok).toBe(true);
    expect(at(14.15)).toMatchObject({ problem: 'wrong-frequency' });
    expect(at(13.85)).toMatchObject({ problem: 'wrong-frequency' });
  });

  it('names no signal, clipping and a level above the window', () => {
    expect(checkStimulus(readingWithThd(-300, { flags: ['no-signal'] }), STIMULUS, TRIM)).toMatchObject({ problem: 'no-signal' });
    expect(checkStimulus(readingWithThd(-20, { flags: ['clipping'] }), STIMULUS, TRIM)).toMatchObject({ problem: 'clipping' });
    const hot = readingWithThd(-70, { fundamental: { frequencyHz: 14, levelDbfs: -6, phaseDeg: 0 } });
    expect(checkStimulus(hot, STIMULUS, TRIM)).toMatchObject({ ok: false, problem: 'level-high' });
  });

  it('moves the window with the generator’s level (a linear stage: 6 dB more in, 6 dB more out)', () => {
    const reading = readingWithThd(-70, { fundamental: { frequencyHz: 14, levelDbfs: -6, phaseDeg: 0 } });
    expect(checkStimulus(reading, { ...STIMULUS, levelDbfs: -6 }, TRIM)).toEqual({ ok: true });
    // ... which is why main also checks that the generator is at the procedure's level.
    expect(checkStimulusSetting({ ...STIMULUS, levelDbfs: -6 }, TRIM)).toMatch(/not the procedure's -12\.0 dBFS/);
  });
});

describe('checkStimulusSetting', () => {
  it('allows a planned frequency within 3 % of the procedure’s and refuses one further away', () => {
    expect(checkStimulusSetting({ ...STIMULUS, frequencyHz: 14 * 1.029 }, TRIM)).toBeNull();
    expect(checkStimulusSetting({ ...STIMULUS, frequencyHz: 14 * 0.971 }, TRIM)).toBeNull();
    expect(checkStimulusSetting({ ...STIMULUS, frequencyHz: 14 * 1.031 }, TRIM)).toMatch(/3\.1 % from the procedure's 14\.00 Hz/);
    // Finding 1's plan: 15.477 Hz for a 14 Hz step.
    expect(checkStimulusSetting({ ...STIMULUS, frequencyHz: 15.477 }, TRIM)).toMatch(/10\.6 %/);
  });
});

describe('procedure revisions', () => {
  it('reads a revision A procedure stored without the level window or frequency tolerance', () => {
    const { expectedLevelDbfs: _w, frequencyTolerancePercent: _f, ...revisionA } = { ...DEMO_PROCEDURE.trim };
    const parsed = procedureSchema.parse({ ...DEMO_PROCEDURE, revision: 'A', trim: revisionA });
    expect(parsed.trim.expectedLevelDbfs).toBeNull();
    expect(parsed.trim.frequencyTolerancePercent).toBe(1);
    // Without a window only the frequency is checked: a 16 dB low capture of the right tone passes.
    const low = readingWithThd(-70, { fundamental: { frequencyHz: 14, levelDbfs: -28, phaseDeg: 0 } });
    expect(checkStimulus(low, STIMULUS, parsed.trim)).toEqual({ ok: true });
  });

  it('refuses a window whose low edge is not below its high edge', () => {
    const bad = { ...DEMO_PROCEDURE, trim: { ...DEMO_PROCEDURE.trim, expectedLevelDbfs: { low: -9, high: -15 } } };
    expect(procedureSchema.safeParse(bad).success).toBe(false);
  });
});
