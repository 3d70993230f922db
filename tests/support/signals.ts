// Synthetic test signals whose construction gives the expected values.

export interface TonePartial {
  order: number;
  /** Amplitude relative to the fundamental, dBc. */
  levelDbc: number;
  /** Phase of this partial in A·cos(2πnft + φ), degrees. */
  phaseDeg: number;
}

/** Fundamental of peak `amplitude` at `frequencyHz` with phase `phaseDeg`, plus harmonics. */
export function tone(
  length: number,
  sampleRateHz: number,
  frequencyHz: number,
  amplitude: number,
  { phaseDeg = 0, partials = [] as TonePartial[], startSample = 0 } = {},
): Float64Array {
  const out = new Float64Array(length);
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const phase1 = (phaseDeg * Math.PI) / 180;
  for (let i = 0; i < length; i++) {
    const n = i + startSample;
    let x = amplitude * Math.cos(w * n + phase1);
    for (const p of partials) {
      x += amplitude * 10 ** (p.levelDbc / 20) * Math.cos(p.order * w * n + (p.phaseDeg * Math.PI) / 180);
    }
    out[i] = x;
  }
  return out;
}

export const dbc = (ratio: number) => 20 * Math.log10(ratio);
