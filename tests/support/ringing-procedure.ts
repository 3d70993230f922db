// A test procedure with a ringing step (invented: code, model and limits are made up for these
// tests), and scope records of a textbook second-order system's square-wave response to attach.

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { RingingStep } from '../../shared/procedures/procedure-file.ts';
import { scopeCsvText } from './scope-csv-text.ts';
import { bandLimitedSquareResponse, scopeView, squareWaveResponse, type SecondOrder } from './step-response.ts';

const DEMO = fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url));

export const RINGING_STEP: RingingStep = {
  id: 'ringing-20k',
  title: 'Square-wave ringing at 20 kHz',
  kind: 'ringing',
  instructions: ['Connect the oscilloscope across the dummy load on the unit’s output.', 'Capture a few periods and export the record as CSV.'],
  squareHz: 20_000,
  level: { value: -10, unit: 'dBFS' },
  channel: 0,
  limits: {
    ringFrequencyHz: { low: 100_000, unit: 'Hz' },
    dampingRatio: { low: 0.3, unit: 'ratio' },
    overshootPercent: { high: 30, unit: '%' },
    settlingTimeS: { high: 20e-6, unit: 's' },
  },
  onFail: 'continue',
};

/** The demo procedure's notice and trim with the ringing step between them, as a file in `dir`. */
export function ringingProcedureFile(dir: string, step: RingingStep = RINGING_STEP): string {
  const demo = JSON.parse(readFileSync(DEMO, 'utf8'));
  const file = {
    ...demo,
    code: 'RING-TEST',
    revision: 'A',
    title: 'Ringing test procedure (invented for tests)',
    requiresCalibration: false,
    steps: [demo.steps[0], step, demo.steps.find((s: { kind: string }) => s.kind === 'trim')],
  };
  const path = join(dir, 'ring-test.json');
  writeFileSync(path, JSON.stringify(file, null, 2));
  return path;
}

/**
 * A scope's CSV of the system's response to a ±0.5 V square wave: 2.2 periods, 8 bits over a screen
 * 8 % wider than the trace, half a code of noise, `samplesPerRing` samples a ringing period, a
 * preamble as many exports write.
 */
export function scopeRecordText(system: SecondOrder, squareHz: number, samplesPerRing = 100): string {
  return drivenRecordText(system, squareHz, null, samplesPerRing);
}

/**
 * As scopeRecordText, for the unit driven by a square wave holding only its harmonics below `topHz`
 * (an audio interface's square: nothing above half its sample rate), or by ideal edges without it.
 */
export function drivenRecordText(system: SecondOrder, squareHz: number, topHz: number | null, samplesPerRing = 100): string {
  const dt = 1 / (samplesPerRing * system.naturalHz);
  const r = { system, squareHz, sampleIntervalS: dt, samples: Math.round(2.2 / squareHz / dt), lowV: -0.5, highV: 0.5, firstEdgeS: 0.1 / squareHz };
  const captured = scopeView(topHz === null ? squareWaveResponse(r) : bandLimitedSquareResponse(r, topHz), 7);
  return scopeCsvText(0, dt, [captured], { preamble: [['Record Length', String(captured.length)], ['Sample Interval', dt.toExponential(6)]], header: ['TIME', 'CH1'] });
}
