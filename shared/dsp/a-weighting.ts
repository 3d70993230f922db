// A-weighting from its analytic definition (IEC 61672-1:2013, annex E): poles at 20.6, 107.7,
// 737.9 and 12194 Hz, normalised to 0 dB at 1 kHz by the A1000 constant of +2.00 dB.

const F1 = 20.598997;
const F2 = 107.65265;
const F3 = 737.86223;
const F4 = 12194.217;
const A1000_DB = 1.9997;

/** A-weighting gain (linear amplitude) at `frequencyHz`. */
export function aWeightingGain(frequencyHz: number): number {
  const f2 = frequencyHz * frequencyHz;
  const response = (F4 * F4 * f2 * f2) / ((f2 + F1 * F1) * Math.sqrt((f2 + F2 * F2) * (f2 + F3 * F3)) * (f2 + F4 * F4));
  return response * 10 ** (A1000_DB / 20);
}

export function aWeightingDb(frequencyHz: number): number {
  return 20 * Math.log10(aWeightingGain(frequencyHz));
}
