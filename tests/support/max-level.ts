// Readings of a memoryless cubic stage, y = x − a·x³, for the max-level tests. Driven with
// x = A·sin θ, sin³θ = (3 sin θ − sin 3θ)/4 (the trigonometric identity; textbook) gives a
// fundamental of A·(1 − 3aA²/4) and an H3 of aA³/4, exactly: THD = (aA²/4)/(1 − 3aA²/4). Levels in
// dBFS of a sine (AES17: a full-scale sine is 0 dBFS, so its peak is 10^(dBFS/20) of full scale).

import type { Reading } from '../../shared/measurement/reading.ts';
import type { MaxLevelStep } from '../../shared/procedures/max-level.ts';
import { readingWithThd, withAllHarmonics } from './station.ts';

/** Noise in the band relative to the fundamental, as a ratio: −100 dB, far below any threshold here. */
export const NOISE_RATIO = 1e-5;

/** THD (ratio) of the cubic stage at peak drive A. */
export const cubicThd = (a: number, amplitude: number) => (a * amplitude ** 2) / 4 / (1 - (3 * a * amplitude ** 2) / 4);

/**
 * The station's reading of the stage's output while the generator plays `generatorDbfs`, on a
 * station whose output gives `outFs` dBu and whose input reads `inFs` dBu at full scale, at
 * `frequencyHz`. THD+N is THD and the noise added in power.
 */
export function cubicReading(a: number, generatorDbfs: number, station: { outFs: number; inFs: number }, frequencyHz = 1000, overrides: Partial<Reading> = {}): Reading {
  const amplitude = 10 ** (generatorDbfs / 20);
  const thd = cubicThd(a, amplitude);
  const outputPeak = amplitude * (1 - (3 * a * amplitude ** 2) / 4);
  // The output in dBu, read back through the input's calibration.
  const levelDbfs = 20 * Math.log10(outputPeak) + station.outFs - station.inFs;
  const thdn = Math.hypot(thd, NOISE_RATIO);
  const base = withAllHarmonics(
    readingWithThd(20 * Math.log10(thd), {
      fundamental: { frequencyHz, levelDbfs, phaseDeg: 0 },
      harmonics: [{ order: 3, frequencyHz: 3 * frequencyHz, levelDbc: 20 * Math.log10(thd), phaseDeg: 0 }],
      thdnPercent: 100 * thdn,
      thdnDb: 20 * Math.log10(thdn),
      sinadDb: -20 * Math.log10(thdn),
    }),
  );
  return { ...base, ...overrides };
}

/**
 * Where the stage's THD+N reaches `thresholdPercent`, by the closed form above (not the step's
 * code): THD² + noise² = threshold², aA²/4 = u with u/(1 − 3u) = THD, so u = THD/(1 + 3·THD). The
 * output level there in dBu, through the output's calibration (the input's cancels).
 */
export function cubicCrossingDbu(a: number, thresholdPercent: number, outFs: number): number {
  const thd = Math.sqrt((thresholdPercent / 100) ** 2 - NOISE_RATIO ** 2);
  const u = thd / (1 + 3 * thd);
  const amplitude = Math.sqrt((4 * u) / a);
  return 20 * Math.log10(amplitude * (1 - 3 * u)) + outFs;
}

/** A max-level step at 1 kHz, +4 to +18 dBu in 1 dB steps until THD+N reaches 1 %, at least +12 dBu (invented limits). */
export const MAX_LEVEL_STEP: MaxLevelStep = {
  id: 'max-level-1khz',
  title: 'Maximum output level at 1 kHz (invented limits)',
  kind: 'max-level',
  instructions: ['The level rises in 1 dB steps until THD+N reaches 1 %.'],
  frequencyHz: 1000,
  startLevel: { value: 4, unit: 'dBu' },
  stepDb: 1,
  ceiling: { value: 18, unit: 'dBu' },
  thdnThresholdPercent: 1,
  limits: { maxLevelDbu: { low: 12, unit: 'dBu' } },
  onFail: 'continue',
};

/**
 * A procedure file (schema 2, invented values) of a safety notice, the given max-level step and a
 * trim after it (a procedure has its trim; the max-level runs first, at the trimmer as found).
 */
export function maxLevelProcedureText(maxLevel: object, revision = 'A', requiresCalibration = true): string {
  return JSON.stringify({
    schemaVersion: 2,
    code: 'ML-TEST',
    revision,
    title: 'Maximum output level (invented values)',
    invented: true,
    model: { code: 'MG-20', name: 'Invented output stage', maker: 'Invented', channels: 1 },
    serial: { pattern: '^ML-\\d{4}$', example: 'ML-0001' },
    requiresCalibration,
    steps: [
      { id: 'safety', title: 'Safety', kind: 'notice', instructions: ['Mute monitor speakers and headphones; wear hearing protection.'], acknowledgement: 'The bench is safe to start.' },
      maxLevel,
      {
        id: 'trim',
        title: 'Trim',
        kind: 'trim',
        instructions: ['Trim from the safe end.'],
        stimulusHz: 14,
        stimulusLevelDbfs: -12,
        expectedLevelDbfs: null,
        frequencyTolerancePercent: 1,
        positionUnit: 'turns',
        positionMin: 0,
        positionMax: 10,
        positionStep: 0.5,
        limitThdDb: -60,
        harmonicOrder: 3,
        marginDb: 3,
        gainRiseDb: 1,
        lfRiseDb: 10,
        onFail: 'stop',
      },
    ],
  });
}
