import { describe, expect, it } from 'vitest';
import {
  BLACKMAN_HARRIS_4,
  BLACKMAN_HARRIS_7,
  FLAT_TOP_HFT95,
  HANN,
  WindowKernel,
  fillWindow,
  windowProperties,
  type CosineSumWindow,
} from '../../shared/dsp/windows.ts';

const N = 4096;

/** Highest side lobe relative to the main lobe, dB, scanned on the window's exact DTFT. */
function highestSideLobeDb(window: CosineSumWindow): number {
  const kernel = new WindowKernel(window, N);
  let highest = 0;
  // The main lobe of a K-term window ends at its first null, K bins out.
  for (let x = window.mainLobeBins + 0.001; x < 60; x += 0.005) {
    kernel.evaluate(x);
    highest = Math.max(highest, Math.hypot(kernel.re, kernel.im));
  }
  return 20 * Math.log10(highest);
}

/** Direct DTFT of the window samples (the definition), normalised to its sum. */
function directDtft(window: CosineSumWindow, x: number): [number, number] {
  const w = fillWindow(window, new Float64Array(N));
  let re = 0;
  let im = 0;
  let sum = 0;
  for (let n = 0; n < N; n++) {
    re += w[n] * Math.cos((-2 * Math.PI * x * n) / N);
    im += w[n] * Math.sin((-2 * Math.PI * x * n) / N);
    sum += w[n];
  }
  return [re / sum, im / sum];
}

describe('cosine-sum windows against their published figures', () => {
  it.each([
    // Harris (1978), table 1: highest side lobe, ENBW in bins, coherent gain (from memory).
    ['Hann', HANN, -31.5, 1.5, 0.5],
    ['4-term Blackman-Harris', BLACKMAN_HARRIS_4, -92, 2.0, 0.36],
  ] as const)('%s: side lobe, ENBW and coherent gain (Harris 1978, table 1)', (_name, window, sideLobeDb, enbw, gain) => {
    const properties = windowProperties(fillWindow(window, new Float64Array(N)));
    expect(Math.abs(highestSideLobeDb(window) - sideLobeDb)).toBeLessThan(0.6);
    expect(properties.enbwBins).toBeCloseTo(enbw, 2);
    expect(properties.coherentGain).toBeCloseTo(gain, 2);
  });

  it('7-term Blackman-Harris: side lobes near −180 dB, ENBW 2.63 bins (Albrecht 2001; from memory)', () => {
    expect(highestSideLobeDb(BLACKMAN_HARRIS_7)).toBeLessThan(-175);
    expect(windowProperties(fillWindow(BLACKMAN_HARRIS_7, new Float64Array(N))).enbwBins).toBeCloseTo(2.63, 2);
  });

  it('HFT95 flat-top: −95.0 dB side lobe, ENBW 3.8112 bins, ±0.0044 dB flatness (Heinzel et al. 2002, appendix D)', () => {
    expect(Math.abs(highestSideLobeDb(FLAT_TOP_HFT95) - -95.0)).toBeLessThan(0.3);
    expect(windowProperties(fillWindow(FLAT_TOP_HFT95, new Float64Array(N))).enbwBins).toBeCloseTo(3.8112, 3);
    const kernel = new WindowKernel(FLAT_TOP_HFT95, N);
    kernel.evaluate(0.5); // worst-case scalloping, half a bin off
    expect(Math.abs(20 * Math.log10(Math.hypot(kernel.re, kernel.im)))).toBeLessThan(0.01);
  });

  it('the analytic kernel equals the direct DTFT of the window samples (definition)', () => {
    for (const window of [HANN, BLACKMAN_HARRIS_4, BLACKMAN_HARRIS_7, FLAT_TOP_HFT95]) {
      const kernel = new WindowKernel(window, N);
      for (const x of [0, 0.25, -0.7, 1, 2.5, -3.25, 7, 9.9]) {
        kernel.evaluate(x);
        const [re, im] = directDtft(window, x);
        expect(Math.abs(kernel.re - re) + Math.abs(kernel.im - im)).toBeLessThan(1e-12);
      }
    }
  });
});
