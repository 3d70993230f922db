// The chain's frequency response by stepped sine: which frequencies to play, and the gain read
// from what each step captured. Output looped to input, so the "response" is the interface's own
// output and input together; a unit is never in this path.

import { NoCoherentFrequency, planTestFrequency } from '../measurement/frequency-planner.ts';

/**
 * ISO 266:1997 preferred frequencies for one-third-octave steps, 10 Hz to 20 kHz (the R10 series
 * rounded as the standard lists them). Written from memory of the standard, not copied from it.
 */
export const ISO_266_THIRD_OCTAVE_HZ: readonly number[] = [
  10, 12.5, 16, 20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000,
  2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000, 20000,
];

/** The response is referred to the step nearest this frequency. */
export const RESPONSE_REFERENCE_HZ = 1000;

/**
 * Largest move of a step from its preferred frequency when planned for one clock, and the slack
 * allowed when a measured step is matched to the reference or to a band edge, percent. A third
 * octave spans about ±12 % around its centre, so 5 % still names the same step; the planner's own
 * 1 % default (meant to keep a procedure's tone) would leave most low steps windowed.
 */
export const STEP_MAX_OFFSET_PERCENT = 5;

/** The top step lies at or below this fraction of the sample rate, clear of the converters' anti-alias filters. */
export const TOP_FRACTION_OF_SAMPLE_RATE = 0.45;

export interface SteppedSinePlanRequest {
  sampleRateHz: number;
  /** Lowest and highest wanted step, Hz; by default 10 Hz and 20 kHz. */
  lowestHz?: number;
  highestHz?: number;
  /**
   * Output and input on one clock: each step is moved to whole cycles per analysis frame, clear of
   * mains, through planTestFrequency. Omitted: the preferred frequencies are played as they are.
   */
  oneClock?: {
    mainsHz: 50 | 60;
    /**
     * Harmonics kept clear of mains; by default 1: the response reads only the fundamental, and
     * asking for ten leaves most steps below 300 Hz windowed (100 Hz's H5 is 50 Hz mains' H10).
     */
    harmonicCount?: number;
    maxOffsetPercent?: number;
  };
}

export interface SteppedSineStep {
  /** The ISO 266 preferred frequency this step stands for. */
  nominalHz: number;
  /** The frequency to play (equal to nominalHz unless planned for one clock). */
  frequencyHz: number;
  coherent: boolean;
  /** Whole cycles per frame and the frame when coherent, else null. */
  cycles: number | null;
  frameSize: number | null;
  /** Why this frequency: the planner's reason, or why the step stays windowed. */
  note: string;
}

/** The stepped-sine plan: every ISO 266 third-octave frequency from 10 Hz up to 20 kHz or 0.45 × the sample rate, whichever is lower. */
export function planSteppedSine(request: SteppedSinePlanRequest): SteppedSineStep[] {
  const { sampleRateHz } = request;
  if (!(sampleRateHz > 0) || !Number.isFinite(sampleRateHz)) throw new RangeError(`sample rate must be a positive number of Hz, got ${sampleRateHz}`);
  const lowest = request.lowestHz ?? ISO_266_THIRD_OCTAVE_HZ[0];
  const top = Math.min(request.highestHz ?? 20000, TOP_FRACTION_OF_SAMPLE_RATE * sampleRateHz);
  const nominals = ISO_266_THIRD_OCTAVE_HZ.filter((f) => f >= lowest && f <= top);
  return nominals.map((nominalHz) => {
    const clock = request.oneClock;
    if (!clock) {
      return { nominalHz, frequencyHz: nominalHz, coherent: false, cycles: null, frameSize: null, note: 'played as the preferred frequency, analysed windowed' };
    }
    try {
      const plan = planTestFrequency({
        targetHz: nominalHz,
        sampleRateHz,
        mainsHz: clock.mainsHz,
        harmonicCount: clock.harmonicCount ?? 1,
        maxOffsetHz: (nominalHz * (clock.maxOffsetPercent ?? STEP_MAX_OFFSET_PERCENT)) / 100,
      });
      return { nominalHz, frequencyHz: plan.frequencyHz, coherent: true, cycles: plan.cycles, frameSize: plan.frameSize, note: plan.reason };
    } catch (error) {
      if (!(error instanceof NoCoherentFrequency)) throw error;
      return { nominalHz, frequencyHz: nominalHz, coherent: false, cycles: null, frameSize: null, note: error.message };
    }
  });
}

/** What one step played and what came back. */
export interface ResponseStep {
  frequencyHz: number;
  /** Generator level, dBFS (a full-scale sine is 0 dBFS). */
  generatorDbfs: number;
  /** The captured fundamental, dBFS. */
  capturedDbfs: number;
}

export interface ResponsePoint extends ResponseStep {
  /** capturedDbfs − generatorDbfs: the chain's gain at this frequency. */
  gainDb: number;
  /** gainDb minus the reference step's gain. */
  relativeDb: number;
}

export interface ChainResponse {
  /** Frequency of the step used as the reference (the one nearest 1 kHz). */
  referenceHz: number;
  referenceGainDb: number;
  /** Sorted by frequency. */
  points: ResponsePoint[];
}

export type ChainResponseOutcome = { ok: true; response: ChainResponse } | { ok: false; reason: string };

/** The chain's gain at every step, and relative to the step at 1 kHz. Refuses a set it cannot refer to 1 kHz, or one holding a number that is not finite. */
export function chainResponse(steps: readonly ResponseStep[]): ChainResponseOutcome {
  if (steps.length === 0) return { ok: false, reason: 'No response steps were measured; run the stepped sine again.' };
  for (const [index, step] of steps.entries()) {
    for (const field of ['frequencyHz', 'generatorDbfs', 'capturedDbfs'] as const) {
      if (!Number.isFinite(step[field])) {
        return { ok: false, reason: `Step ${index + 1} has ${field} = ${step[field]}, not a finite number; measure that step again.` };
      }
    }
    if (step.frequencyHz <= 0) return { ok: false, reason: `Step ${index + 1} has frequencyHz = ${step.frequencyHz}; a step's frequency must be above 0 Hz.` };
  }
  const slack = 1 + STEP_MAX_OFFSET_PERCENT / 100;
  let reference: ResponseStep | null = null;
  for (const step of steps) {
    const distance = Math.abs(Math.log(step.frequencyHz / RESPONSE_REFERENCE_HZ));
    if (distance <= Math.log(slack) && (reference === null || distance < Math.abs(Math.log(reference.frequencyHz / RESPONSE_REFERENCE_HZ)))) {
      reference = step;
    }
  }
  if (reference === null) {
    return {
      ok: false,
      reason: `No step lies within ${STEP_MAX_OFFSET_PERCENT} % of ${RESPONSE_REFERENCE_HZ} Hz, the response's reference; include the 1 kHz step and measure again.`,
    };
  }
  const referenceGainDb = reference.capturedDbfs - reference.generatorDbfs;
  const points = steps
    .map((step) => {
      const gainDb = step.capturedDbfs - step.generatorDbfs;
      return { frequencyHz: step.frequencyHz, generatorDbfs: step.generatorDbfs, capturedDbfs: step.capturedDbfs, gainDb, relativeDb: gainDb - referenceGainDb };
    })
    .sort((a, b) => a.frequencyHz - b.frequencyHz);
  return { ok: true, response: { referenceHz: reference.frequencyHz, referenceGainDb, points } };
}

export interface BandDeviation {
  bandLowHz: number;
  bandHighHz: number;
  /** Highest and lowest relativeDb of the points in the band. */
  maxDb: number;
  minDb: number;
  /** The larger of |maxDb| and |minDb|, and the frequency where it lies. */
  worstDb: number;
  worstHz: number;
  points: number;
}

/**
 * The response's largest departure from the reference over a band. A step planned a little off
 * its preferred frequency (19.9 Hz for 20 Hz) still counts for the band edge it stands for: the
 * edges are widened by STEP_MAX_OFFSET_PERCENT. Null when no point lies in the band.
 */
export function bandDeviation(response: ChainResponse, bandLowHz: number, bandHighHz: number): BandDeviation | null {
  const slack = 1 + STEP_MAX_OFFSET_PERCENT / 100;
  const inBand = response.points.filter((p) => p.frequencyHz >= bandLowHz / slack && p.frequencyHz <= bandHighHz * slack);
  if (inBand.length === 0) return null;
  let maxDb = -Infinity;
  let minDb = Infinity;
  let worstDb = -1;
  let worstHz = 0;
  for (const p of inBand) {
    maxDb = Math.max(maxDb, p.relativeDb);
    minDb = Math.min(minDb, p.relativeDb);
    if (Math.abs(p.relativeDb) > worstDb) {
      worstDb = Math.abs(p.relativeDb);
      worstHz = p.frequencyHz;
    }
  }
  return { bandLowHz, bandHighHz, maxDb, minDb, worstDb, worstHz, points: inBand.length };
}
