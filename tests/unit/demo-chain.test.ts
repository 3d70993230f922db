// The demo loopback against its own construction: each figure below is computed here from the
// chain's parameters and textbook formulas, never read from the chain's output first.

import { describe, expect, it } from 'vitest';
import { DEMO_CHAIN_PARAMETERS, DemoChain } from '../../shared/sim/demo-chain.ts';

const RATE = 48000;

/** Amplitude of the component at `hz` by projection on sin and cos over `length` samples (whole cycles). */
function amplitudeAt(x: Float32Array, from: number, length: number, hz: number): number {
  let s = 0;
  let c = 0;
  for (let i = 0; i < length; i++) {
    const w = (2 * Math.PI * hz * i) / RATE;
    s += x[from + i] * Math.sin(w);
    c += x[from + i] * Math.cos(w);
  }
  return (2 * Math.hypot(s, c)) / length;
}

function render(chain: DemoChain, seconds: number): Float32Array {
  const out = new Float32Array(Math.round(seconds * RATE));
  chain.render(out);
  return out;
}

describe('demo loopback chain (shared/sim/demo-chain.ts)', () => {
  it('delays a burst by exactly its latency in samples', () => {
    const chain = new DemoChain(RATE);
    const click = new Float32Array(64);
    click[0] = 0.5;
    chain.playOnce(click, 2048);
    render(chain, 0.1);
    const capture = chain.takeCapture()!;
    expect(capture).not.toBeNull();
    let peakAt = 0;
    for (let i = 1; i < capture.length; i++) if (Math.abs(capture[i]) > Math.abs(capture[peakAt])) peakAt = i;
    // Construction: a pure delay of latencySamples after a high-pass whose impulse response peaks at 0.
    expect(peakAt).toBe(DEMO_CHAIN_PARAMETERS.latencySamples);
    expect(chain.takeCapture()).toBeNull(); // handed over once
  });

  it('follows the first-order high-pass |H| = f/√(f² + fc²) at 10 Hz and 20 Hz', () => {
    for (const hz of [10, 20]) {
      const chain = new DemoChain(RATE, { ...DEMO_CHAIN_PARAMETERS, noiseRms: 0, secondOrder: 0, thirdOrder: 0 });
      chain.setStimulus({ frequencyHz: hz, levelDbfs: -6, on: true });
      const out = render(chain, 4); // 2 Hz corner: the transient (τ = 80 ms) is gone after 2 s
      const a = amplitudeAt(out, 2 * RATE, 2 * RATE, hz);
      const fc = DEMO_CHAIN_PARAMETERS.highPassHz;
      const expectedDb = 20 * Math.log10(hz / Math.hypot(hz, fc)) - 6; // analogue first-order high-pass
      // The bilinear transform warps frequency by (πf/fs)²/3 relative: far below 0.001 dB here.
      expect(20 * Math.log10(a)).toBeCloseTo(expectedDb, 3);
    }
  });

  it('adds H2 = a2·A²/2 and H3 = a3·A³/4 (trigonometric power reduction of sin² and sin³)', () => {
    const chain = new DemoChain(RATE, { ...DEMO_CHAIN_PARAMETERS, noiseRms: 0 });
    chain.setStimulus({ frequencyHz: 1000, levelDbfs: -12, on: true });
    const out = render(chain, 2);
    const amplitude = 10 ** (-12 / 20) * (1000 / Math.hypot(1000, DEMO_CHAIN_PARAMETERS.highPassHz));
    const { secondOrder: a2, thirdOrder: a3 } = DEMO_CHAIN_PARAMETERS;
    const fundamental = amplitude + (3 * a3 * amplitude ** 3) / 4;
    const h2 = amplitudeAt(out, RATE, RATE, 2000) / amplitudeAt(out, RATE, RATE, 1000);
    const h3 = amplitudeAt(out, RATE, RATE, 3000) / amplitudeAt(out, RATE, RATE, 1000);
    // Within 0.05 dB: the output is Float32, whose rounding (about 1e-8 of full scale) is 0.2 % of a −104 dBc harmonic.
    expect(20 * Math.log10(h2)).toBeCloseTo(20 * Math.log10((a2 * amplitude ** 2) / 2 / fundamental), 1);
    expect(20 * Math.log10(h3)).toBeCloseTo(20 * Math.log10((a3 * amplitude ** 3) / 4 / fundamental), 1);
  });

  it('has white noise of the stated RMS with the generator off', () => {
    const chain = new DemoChain(RATE);
    const out = render(chain, 2);
    let sum = 0;
    for (let i = RATE; i < out.length; i++) sum += out[i] ** 2;
    const rms = Math.sqrt(sum / (out.length - RATE));
    // 48000 Gaussian samples: the RMS estimate's relative standard deviation is 1/√(2N) ≈ 0.3 %.
    expect(rms / DEMO_CHAIN_PARAMETERS.noiseRms).toBeGreaterThan(0.98);
    expect(rms / DEMO_CHAIN_PARAMETERS.noiseRms).toBeLessThan(1.02);
  });
});
