// dBu arithmetic against its definition, thermal noise as the lowest floor a chain can have, and
// the A-weighted noise figure of white noise against IEC 61672-1's curve integrated over the band.

import { describe, expect, it } from 'vitest';
import { BOLTZMANN_J_PER_K, checkChainFloorDbu, johnsonNoiseDbu, johnsonNoiseVrms } from '../../shared/calibration/chain-floor.ts';
import {
  analogueLevel,
  DBU_REFERENCE_VRMS,
  DBV_IN_DBU,
  dbuFromDbfs,
  dbuFromDbv,
  dbuFromVrms,
  dbvFromDbu,
  formatLevel,
  vRmsFromDbu,
} from '../../shared/levels.ts';
import { analyzeRecord } from '../../shared/measurement/record-analysis.ts';
import { FLOOR_DB } from '../../shared/measurement/reading.ts';
import { gaussian, seededRandom } from '../support/random.ts';

// Definitions (broadcast and pro-audio practice): 0 dBu is the RMS voltage that dissipates 1 mW in
// 600 Ω, V = √(P·R) = √(0.001 · 600) = √0.6 V; 0 dBV is 1 V RMS.
const ZERO_DBU_V = Math.sqrt(0.001 * 600);
const ZERO_DBV_V = 1;

describe('dBu and dBV from their definitions', () => {
  it('0 dBu is the voltage giving 1 mW in 600 Ω (≈ 0.7746 V)', () => {
    expect(DBU_REFERENCE_VRMS).toBeCloseTo(ZERO_DBU_V, 15);
    expect(ZERO_DBU_V ** 2 / 600).toBeCloseTo(0.001, 15);
    expect(vRmsFromDbu(0)).toBeCloseTo(0.7746, 4);
    expect(dbuFromVrms(ZERO_DBU_V)).toBeCloseTo(0, 12);
  });

  it('+4 dBu ≈ 1.228 V and 0 dBV ≈ +2.218 dBu', () => {
    expect(vRmsFromDbu(4)).toBeCloseTo(ZERO_DBU_V * 10 ** (4 / 20), 12);
    expect(vRmsFromDbu(4)).toBeCloseTo(1.228, 3);
    const zeroDbvInDbu = 20 * Math.log10(ZERO_DBV_V / ZERO_DBU_V);
    expect(DBV_IN_DBU).toBeCloseTo(zeroDbvInDbu, 12);
    expect(DBV_IN_DBU).toBeCloseTo(2.218, 3);
    expect(dbuFromDbv(0)).toBeCloseTo(zeroDbvInDbu, 12);
    expect(dbuFromDbv(-10)).toBeCloseTo(20 * Math.log10((ZERO_DBV_V * 10 ** (-10 / 20)) / ZERO_DBU_V), 12);
    expect(dbvFromDbu(4)).toBeCloseTo(20 * Math.log10((ZERO_DBU_V * 10 ** (4 / 20)) / ZERO_DBV_V), 12);
  });

  it('a dBFS figure in dBu adds the channel’s dBu at 0 dBFS; the floor sentinel stays the floor', () => {
    // dBFS is relative to full scale, so X dBFS on a channel where full scale is C dBu is X + C dBu.
    expect(dbuFromDbfs(-12, { dbuAtFullScale: 18 })).toBeCloseTo(6, 12);
    expect(analogueLevel(-12, { dbuAtFullScale: 18 }).vRms).toBeCloseTo(ZERO_DBU_V * 10 ** (6 / 20), 12);
    expect(dbuFromDbfs(FLOOR_DB, { dbuAtFullScale: 18 })).toBe(FLOOR_DB);
  });

  it('formats "−12.0 dBFS (+6.0 dBu)" with a true minus sign, and dBFS alone without a calibration', () => {
    expect(formatLevel(-12, { dbuAtFullScale: 18 })).toBe('\u221212.0 dBFS (+6.0 dBu)');
    expect(formatLevel(-30, { dbuAtFullScale: 18 })).toBe('\u221230.0 dBFS (\u221212.0 dBu)');
    expect(formatLevel(-12, null)).toBe('\u221212.0 dBFS');
    expect(formatLevel(-18, { dbuAtFullScale: 18.04 })).toBe('\u221218.0 dBFS (0.0 dBu)');
  });
});

describe('thermal noise as the lowest possible chain floor (Johnson–Nyquist: v = √(4kTRB))', () => {
  // k exact in SI 2019 (BIPM, SI Brochure 9th edition); 150 Ω, 290 K, 20 Hz–20 kHz.
  const k = 1.380649e-23;
  const vRms = Math.sqrt(4 * k * 290 * 150 * (20000 - 20));
  const expectedDbu = 20 * Math.log10(vRms / ZERO_DBU_V);

  it('a 150 Ω source at 290 K over 20 Hz–20 kHz makes about 0.22 µV, about −131 dBu', () => {
    expect(BOLTZMANN_J_PER_K).toBe(k);
    expect(johnsonNoiseVrms(150, 290, 19980)).toBeCloseTo(vRms, 20);
    expect(johnsonNoiseDbu(150, 290, 19980)).toBeCloseTo(expectedDbu, 10);
    expect(vRms).toBeGreaterThan(0.21e-6);
    expect(vRms).toBeLessThan(0.23e-6);
    expect(Math.abs(expectedDbu - -131)).toBeLessThan(0.5);
  });

  it('refuses a chain floor below it and accepts one above it', () => {
    const below = checkChainFloorDbu(expectedDbu - 1);
    expect(below.ok).toBe(false);
    if (!below.ok) expect(below.message).toMatch(/below the thermal noise of a 150 Ω source .*check the input calibration/);
    expect(checkChainFloorDbu(expectedDbu + 0.01).ok).toBe(true);
    // A good interface's floor, about −100 dBu unweighted, is far above it.
    expect(checkChainFloorDbu(-100).ok).toBe(true);
  });
});

describe('A-weighted noise of white noise against IEC 61672-1 integrated over the band', () => {
  // IEC 61672-1:2013, annex E: A(f) = f4² f⁴ / ((f² + f1²) √((f² + f2²)(f² + f3²)) (f² + f4²)),
  // f1 = 20.6, f2 = 107.7, f3 = 737.9, f4 = 12194 Hz, normalised by A1000 = +2.0 dB at 1 kHz.
  const aGain = (f: number) => {
    const f2 = f * f;
    const r = (12194 ** 2 * f2 * f2) / ((f2 + 20.6 ** 2) * Math.sqrt((f2 + 107.7 ** 2) * (f2 + 737.9 ** 2)) * (f2 + 12194 ** 2));
    return r * 10 ** (2.0 / 20);
  };
  // Simpson's rule on A(f)² over 20 Hz–20 kHz; 200 000 intervals bring its error far below 0.001 dB.
  function integrateAPower(lowHz: number, highHz: number): number {
    const n = 200000;
    const h = (highHz - lowHz) / n;
    let sum = aGain(lowHz) ** 2 + aGain(highHz) ** 2;
    for (let i = 1; i < n; i++) sum += (i % 2 ? 4 : 2) * aGain(lowHz + i * h) ** 2;
    return (sum * h) / 3;
  }

  it('matches the integral within 0.1 dB, and the unweighted figure matches σ² over the band', () => {
    const rate = 48000;
    const sigma = 0.01;
    const length = 1 << 20;
    const normal = gaussian(seededRandom(9));
    const samples = new Float64Array(length);
    for (let i = 0; i < length; i++) samples[i] = sigma * normal();
    const r = analyzeRecord(samples, rate);

    // White noise of variance σ² spreads evenly over 0…fs/2 (one-sided density 2σ²/fs); dBFS is
    // referred to a full-scale sine's mean square of 0.5 (AES17).
    const density = (sigma * sigma) / (rate / 2);
    const expectedNoiseDbfs = 10 * Math.log10((density * (20000 - 20)) / 0.5);
    const expectedWeightedDbfs = 10 * Math.log10((density * integrateAPower(20, 20000)) / 0.5);
    // Tolerance: the estimate averages about 4 × 110 000 periodogram bins in the band; with the
    // window's correlation between neighbours that is ≥ 100 000 independent ones for the flat
    // figure (σ ≈ 4.34/√100 000 ≈ 0.014 dB) and, since A(f)² weights about a quarter of the band
    // heavily, ≥ 25 000 for the weighted one (σ ≈ 0.03 dB); 0.1 dB is over 3σ and still catches a
    // wrong normalisation (2 dB), amplitude weighting instead of power (several dB) or a lost band edge.
    expect(Math.abs(r.noiseDbfs - expectedNoiseDbfs)).toBeLessThan(0.1);
    expect(Math.abs(r.noiseAWeightedDbfs - expectedWeightedDbfs)).toBeLessThan(0.1);
    // A-weighting of white noise over 20 Hz–20 kHz lies a little below the flat figure (IEC curve
    // is below 0 dB above about 6.3 kHz and below 1 kHz): derived above, printed for the record.
    console.info(`white noise σ=${sigma}: expected ${expectedNoiseDbfs.toFixed(3)} / A ${expectedWeightedDbfs.toFixed(3)} dBFS; measured ${r.noiseDbfs.toFixed(3)} / A ${r.noiseAWeightedDbfs.toFixed(3)} dBFS`);
    // In dBu on a channel with full scale at +18 dBu the figures move by exactly 18 dB.
    expect(dbuFromDbfs(r.noiseAWeightedDbfs, { dbuAtFullScale: 18 }) - r.noiseAWeightedDbfs).toBeCloseTo(18, 12);
  });
});
