import { describe, expect, it } from 'vitest';
import { aWeightingDb } from '../../shared/dsp/a-weighting.ts';

describe('A-weighting against IEC 61672-1:2013, table 3 (values from memory)', () => {
  // The table lists nominal frequencies; its values are for the exact base-10 frequencies
  // 1000·10^(k/10) Hz (IEC 61672-1, 5.4.10), rounded to 0.1 dB.
  it.each([
    [31.5, -15, -39.4],
    [63, -12, -26.2],
    [100, -10, -19.1],
    [250, -6, -8.6],
    [500, -3, -3.2],
    [1000, 0, 0.0],
    [2000, 3, 1.2],
    [4000, 6, 1.0],
    [8000, 9, -1.1],
    [10000, 10, -2.5],
    [16000, 12, -6.6],
  ])('nominal %f Hz (k = %i): %f dB', (_nominalHz, k, expectedDb) => {
    const exactHz = 1000 * 10 ** (k / 10);
    expect(Math.abs(aWeightingDb(exactHz) - expectedDb)).toBeLessThanOrEqual(0.05 + 1e-9);
  });
});
