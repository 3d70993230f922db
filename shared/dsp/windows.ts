// Cosine-sum windows w[n] = Σ_k (−1)^k a_k cos(2πkn/N), periodic form (DFT-even),
// with the coefficients published by Harris (Proc. IEEE 66(1), 1978).

export interface CosineSumWindow {
  readonly name: string;
  readonly coefficients: readonly number[];
}

export const HANN: CosineSumWindow = { name: 'hann', coefficients: [0.5, 0.5] };

/** 4-term Blackman-Harris, −92 dB highest side lobe (Harris 1978, table 1). */
export const BLACKMAN_HARRIS_4: CosineSumWindow = {
  name: 'blackman-harris-4',
  coefficients: [0.35875, 0.48829, 0.14128, 0.01168],
};

/** Fills `out` with the periodic window of length out.length. */
export function fillWindow(window: CosineSumWindow, out: Float64Array): Float64Array {
  const n = out.length;
  const a = window.coefficients;
  for (let i = 0; i < n; i++) {
    let w = 0;
    for (let k = 0; k < a.length; k++) {
      w += (k % 2 === 0 ? 1 : -1) * a[k] * Math.cos((2 * Math.PI * k * i) / n);
    }
    out[i] = w;
  }
  return out;
}
