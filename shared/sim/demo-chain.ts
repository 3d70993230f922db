// The demo bench as a loopback (output wired to input): an INVENTED interface chain, so a chain
// check (or a level calibration) can be practised and tested with no interface. Every figure here
// is invented for the demo and describes no real product.
//
// The chain, in signal order: the generator's sine (or a burst played once), the output's
// coupling capacitor as a first-order high-pass, the converters' small static nonlinearity
// y = x + a2·x² + a3·x³, white Gaussian noise of a stated RMS, and a pure delay of a whole number
// of samples (output plus input buffering). Each is simple enough that a test can compute what the
// chain check must find from these parameters alone.

import { GaussianNoise, mulberry32 } from '../dsp/seeded-noise.ts';
import { SineSource, type StimulusSetting } from '../dsp/sine-source.ts';

export interface DemoChainParameters {
  /** Corner of the first-order high-pass (the output's coupling capacitor), Hz. */
  highPassHz: number;
  /** Second- and third-order coefficients of y = x + a2·x² + a3·x³ (x in full-scale units). */
  secondOrder: number;
  thirdOrder: number;
  /** RMS of the white noise added at the input, full-scale units (a full-scale sine has RMS 1/√2). */
  noiseRms: number;
  /** Round trip, samples. */
  latencySamples: number;
}

/**
 * Invented values: at a −12 dBFS tone H2 ≈ −104 dBc and H3 ≈ −100 dBc; noise about −106 dBFS
 * unweighted over 20 Hz–20 kHz at 48 kHz; a 2 Hz corner (−0.17 dB at 10 Hz); 517 samples
 * (10.8 ms at 48 kHz), an odd number so a test cannot pass by rounding to a block size.
 */
export const DEMO_CHAIN_PARAMETERS: DemoChainParameters = {
  highPassHz: 2,
  secondOrder: 5e-5,
  thirdOrder: 6e-4,
  noiseRms: 4e-6,
  latencySamples: 517,
};

/**
 * The invented interface's output at 0 dBFS, for practising the voltmeter step on the demo bench
 * (a figure typical of studio interfaces, from memory; invented here). The loop has unity gain, so
 * its input reads the same level at the same dBFS.
 */
export const DEMO_INTERFACE_DBU_AT_FULL_SCALE = 18;

export const DEMO_CHAIN_LABEL = 'Demo loopback: an invented interface chain (no real product)';

export class DemoChain {
  readonly sampleRateHz: number;
  readonly parameters: DemoChainParameters;
  private readonly stimulus: SineSource;
  private readonly stimulusBlock = new Float32Array(128);
  // First-order high-pass by the bilinear transform, corner prewarped: y[n] = b·(x[n] − x[n−1]) + a·y[n−1].
  private readonly hpB: number;
  private readonly hpA: number;
  private hpX = 0;
  private hpY = 0;
  private readonly delay: Float32Array;
  private delayAt = 0;
  private readonly noise: GaussianNoise;
  // A burst played once (the latency stimulus) and the capture aligned to its first sample.
  private burst: Float32Array | null = null;
  private burstAt = 0;
  private capture: Float32Array | null = null;
  private captured = 0;

  constructor(sampleRateHz: number, parameters: DemoChainParameters = DEMO_CHAIN_PARAMETERS, seed = 7) {
    this.sampleRateHz = sampleRateHz;
    this.parameters = parameters;
    this.stimulus = new SineSource(sampleRateHz);
    const k = Math.tan((Math.PI * parameters.highPassHz) / sampleRateHz);
    this.hpB = 1 / (1 + k);
    this.hpA = (1 - k) / (1 + k);
    this.delay = new Float32Array(Math.max(1, parameters.latencySamples));
    this.noise = new GaussianNoise(mulberry32(seed));
  }

  setStimulus(setting: StimulusSetting): void {
    this.stimulus.set(setting);
  }

  /**
   * Plays `samples` once (added to the generator, which the chain check mutes first) and captures
   * `captureFrames` samples of the chain's output from the burst's first sample on.
   */
  playOnce(samples: Float32Array, captureFrames: number): void {
    this.burst = samples;
    this.burstAt = 0;
    this.capture = new Float32Array(Math.max(captureFrames, samples.length));
    this.captured = 0;
  }

  /** The finished capture of the burst (once), or null while it is still being captured. */
  takeCapture(): Float32Array | null {
    if (!this.capture || this.captured < this.capture.length) return null;
    const done = this.capture;
    this.capture = null;
    return done;
  }

  /** Fills out[0..frames) with what the input captures. */
  render(out: Float32Array, frames = out.length): void {
    const p = this.parameters;
    for (let done = 0; done < frames; ) {
      const chunk = Math.min(this.stimulusBlock.length, frames - done);
      this.stimulus.fill(this.stimulusBlock, chunk);
      for (let i = 0; i < chunk; i++) {
        let x = this.stimulusBlock[i];
        if (this.burst) {
          x += this.burst[this.burstAt++];
          if (this.burstAt >= this.burst.length) this.burst = null;
        }
        const hp = this.hpB * (x - this.hpX) + this.hpA * this.hpY;
        this.hpX = x;
        this.hpY = hp;
        const shaped = hp + p.secondOrder * hp * hp + p.thirdOrder * hp * hp * hp + p.noiseRms * this.noise.next();
        // A ring of latencySamples: what leaves now went in that many samples ago.
        const y = this.delay[this.delayAt];
        this.delay[this.delayAt] = shaped;
        this.delayAt = (this.delayAt + 1) % this.delay.length;
        out[done + i] = y;
        if (this.capture && this.captured < this.capture.length) this.capture[this.captured++] = y;
      }
      done += chunk;
    }
  }

}
