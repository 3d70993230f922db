// WAV files that stand for a loopback in the chain check's browser tests, each with the values a
// chain check must find known from its construction. Chromium's fake device plays a file at
// 44.1 kHz and loops it, so each is built at that rate and loops without a seam where it matters.

import { mulberry32 } from '../../shared/dsp/seeded-noise.ts';
import { writeFileSync } from 'node:fs';
import { encodeWavFloat32 } from '../../shared/audio/wav.ts';
import { tone } from './signals.ts';

export const CHAIN_WAV_RATE_HZ = 44100;

/** 1 kHz at −12 dBFS plus H3 at −100 dBc: the residual THD is −100 dB by construction. 1 s holds 1000 whole cycles. */
export const CLEAN_TONE = { frequencyHz: 1000, levelDbfs: -12, h3Dbc: -100 } as const;

export function writeCleanToneWav(path: string): string {
  const samples = tone(CHAIN_WAV_RATE_HZ, CHAIN_WAV_RATE_HZ, CLEAN_TONE.frequencyHz, 10 ** (CLEAN_TONE.levelDbfs / 20), {
    partials: [{ order: 3, levelDbc: CLEAN_TONE.h3Dbc, phaseDeg: 0 }],
  });
  writeFileSync(path, encodeWavFloat32([Float32Array.from(samples)], CHAIN_WAV_RATE_HZ));
  return path;
}

/** White Gaussian noise of RMS σ (full-scale units), seeded; 2 s. */
export const NOISE_ONLY = { sigma: 3e-5, seconds: 2, seed: 11 } as const;

export function writeNoiseWav(path: string): string {
  const length = NOISE_ONLY.seconds * CHAIN_WAV_RATE_HZ;
  const random = mulberry32(NOISE_ONLY.seed);
  const samples = new Float32Array(length);
  for (let i = 0; i < length; i += 2) {
    // Box–Muller: two independent standard normals from two uniforms.
    const radius = Math.sqrt(-2 * Math.log(1 - random()));
    const angle = 2 * Math.PI * random();
    samples[i] = NOISE_ONLY.sigma * radius * Math.cos(angle);
    if (i + 1 < length) samples[i + 1] = NOISE_ONLY.sigma * radius * Math.sin(angle);
  }
  writeFileSync(path, encodeWavFloat32([samples], CHAIN_WAV_RATE_HZ));
  return path;
}

/**
 * The stepped sine as a loopback would return it: the panel's octave steps at 44.1 kHz, in its
 * order, each tone at −12 dBFS plus a known deviation (a made-up response: a low-frequency
 * roll-off and a small rise at the top), separated by silence so no reading spans two steps. The
 * first step is held long, so a chain check started within a few seconds of capture finds it;
 * every later one is held long enough for a settled reading of a 1.5 s frame.
 */
export const STEPPED_SINE = {
  levelDbfs: -12,
  deviationDb: { 10: -1.5, 16: -0.6, 20: -0.3, 31.5: -0.1, 16000: 0.25 } as Record<number, number>,
  firstHoldS: 12,
  /** Below 20 Hz a frame is 1.5 s at 44.1 kHz: such a step is held longer. */
  lowHoldS: 4,
  holdS: 3,
  gapS: 0.3,
} as const;

export function steppedSineDeviation(hz: number): number {
  return STEPPED_SINE.deviationDb[hz] ?? 0;
}

export function writeSteppedSineWav(path: string, frequencies: readonly number[]): string {
  const parts: Float32Array[] = [];
  frequencies.forEach((hz, i) => {
    const holdS = i === 0 ? STEPPED_SINE.firstHoldS : hz < 20 ? STEPPED_SINE.lowHoldS : STEPPED_SINE.holdS;
    const hold = Math.round(holdS * CHAIN_WAV_RATE_HZ);
    const amplitude = 10 ** ((STEPPED_SINE.levelDbfs + steppedSineDeviation(hz)) / 20);
    parts.push(Float32Array.from(tone(hold, CHAIN_WAV_RATE_HZ, hz, amplitude, { phaseDeg: -90 })));
    parts.push(new Float32Array(Math.round(STEPPED_SINE.gapS * CHAIN_WAV_RATE_HZ)));
  });
  const all = new Float32Array(parts.reduce((n, p) => n + p.length, 0));
  let at = 0;
  for (const p of parts) {
    all.set(p, at);
    at += p.length;
  }
  writeFileSync(path, encodeWavFloat32([all], CHAIN_WAV_RATE_HZ));
  return path;
}

