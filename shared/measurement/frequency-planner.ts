// Chooses the test frequency: the one nearest the wanted frequency that fits a whole, odd number
// of cycles in the frame (so a shared clock makes the analysis coherent, and successive cycles
// sample different phases) and keeps every counted harmonic resolvably clear of mains hum and
// its multiples (a 10 Hz tone's H5 sits exactly on 50 Hz mains).

import { MAINS_MULTIPLES } from './frame-analyzer.ts';
import { CYCLES_PER_FRAME, frameSizeFor } from './live-meter.ts';

export interface PlanRequest {
  targetHz: number;
  sampleRateHz: number;
  mainsHz: 50 | 60;
  harmonicCount: number;
  /** Frame length; by default the live meter's for the target. */
  frameSize?: number;
  /** Least distance between a counted harmonic and a mains multiple, in bins. */
  clearanceBins?: number;
  /**
   * Farthest the planned frequency may lie from the target, Hz; by default
   * DEFAULT_MAX_OFFSET_PERCENT of the target.
   */
  maxOffsetHz?: number;
}

/**
 * Default largest move of the stimulus from the procedure's frequency, percent: small beside the
 * stimulus check's frequency tolerance, so a planned tone is still the procedure's tone.
 */
export const DEFAULT_MAX_OFFSET_PERCENT = 1;

/**
 * Nothing coherent and clear of mains lies within the allowed distance of the target: the caller
 * uses the target itself, analysed windowed.
 */
export class NoCoherentFrequency extends RangeError {
  override name = 'NoCoherentFrequency';
}

export interface Plan {
  frequencyHz: number;
  /** Whole cycles of the planned frequency in one frame. */
  cycles: number;
  frameSize: number;
  sampleRateHz: number;
  /** Closest approach of a counted harmonic to a mains multiple, Hz. */
  closestMainsHz: number;
  reason: string;
}

// Tones whose lobes overlap are fitted jointly, which separates them cleanly from about 2.5 bins
// apart (a 12 Hz tone's H4 at 48 Hz beside 50 Hz hum, 2.7 bins at 65536 samples, is tested).
const DEFAULT_CLEARANCE_BINS = 3;

export function planTestFrequency(request: PlanRequest): Plan {
  const { targetHz, sampleRateHz, mainsHz, harmonicCount } = request;
  if (!(targetHz > 0) || targetHz >= sampleRateHz / 2) {
    throw new RangeError(`target frequency must lie between 0 and Nyquist (${sampleRateHz / 2} Hz), got ${targetHz}`);
  }
  if (!Number.isInteger(harmonicCount) || harmonicCount < 1) throw new RangeError(`harmonic count must be a whole number ≥ 1`);
  const frameSize = request.frameSize ?? frameSizeFor(sampleRateHz, targetHz);
  const binHz = sampleRateHz / frameSize;
  const clearanceBins = request.clearanceBins ?? DEFAULT_CLEARANCE_BINS;
  const ideal = targetHz / binHz;
  const maxOffsetHz = request.maxOffsetHz ?? (targetHz * DEFAULT_MAX_OFFSET_PERCENT) / 100;
  if (!(maxOffsetHz >= 0)) throw new RangeError(`the largest offset must be a frequency ≥ 0 Hz, got ${maxOffsetHz}`);

  const closestMainsBins = (cycles: number): number => {
    let closest = Infinity;
    const mainsBins = mainsHz / binHz;
    for (let order = 1; order <= harmonicCount; order++) {
      const bin = order * cycles;
      if (bin >= frameSize / 2) break;
      const nearestMultiple = Math.min(MAINS_MULTIPLES, Math.max(1, Math.round(bin / mainsBins)));
      closest = Math.min(closest, Math.abs(bin - nearestMultiple * mainsBins));
    }
    return closest;
  };

  // Walk outward from the ideal cycle count, nearest first, no farther than allowed.
  const steps = Math.ceil(maxOffsetHz / binHz) + 1;
  for (let step = 0; step <= steps; step++) {
    for (const cycles of step === 0 ? [Math.round(ideal)] : [Math.round(ideal) - step, Math.round(ideal) + step]) {
      if (Math.abs(cycles * binHz - targetHz) > maxOffsetHz) continue;
      if (cycles < CYCLES_PER_FRAME || cycles % 2 === 0 || cycles * binHz >= sampleRateHz / 2) continue;
      // The live meter picks its frame from the stimulus frequency: it must pick this one.
      if (request.frameSize === undefined && frameSizeFor(sampleRateHz, cycles * binHz) !== frameSize) continue;
      const clearance = closestMainsBins(cycles);
      if (clearance < clearanceBins) continue;
      const frequencyHz = cycles * binHz;
      return {
        frequencyHz,
        cycles,
        frameSize,
        sampleRateHz,
        closestMainsHz: clearance * binHz,
        reason:
          `${formatHz(frequencyHz)} Hz is ${cycles} whole cycles in ${frameSize} samples at ${sampleRateHz} Hz ` +
          `(${formatHz(Math.abs(frequencyHz - targetHz))} Hz from the wanted ${formatHz(targetHz)} Hz); ` +
          `H1–H${harmonicCount} keep at least ${formatHz(clearance * binHz)} Hz (${clearance.toFixed(1)} bins) from ${mainsHz} Hz mains and its first ${MAINS_MULTIPLES} multiples.`,
      };
    }
  }
  throw new NoCoherentFrequency(
    `no whole-cycle frequency within ${formatHz(maxOffsetHz)} Hz of ${formatHz(targetHz)} Hz keeps H1–H${harmonicCount} clear of ` +
      `${mainsHz} Hz mains at ${sampleRateHz} Hz; use ${formatHz(targetHz)} Hz itself, analysed windowed`,
  );
}

function formatHz(hz: number): string {
  return Number(hz.toPrecision(6)).toString();
}
