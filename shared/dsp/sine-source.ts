// The stimulus: a phase-continuous sine. Start, stop and level changes ramp linearly over a
// fixed time so the unit never sees a step; a frequency change keeps the phase running.
// Runs inside the generator worklet; fill() allocates nothing.

export interface StimulusSetting {
  frequencyHz: number;
  levelDbfs: number;
  on: boolean;
}

export const STIMULUS_RAMP_S = 0.02;

export class SineSource {
  readonly sampleRateHz: number;
  private readonly rampSamples: number;
  private phaseCycles = 0;
  private frequencyHz = 1000;
  private gain = 0;
  private targetGain = 0;
  private rampStep = 0;

  constructor(sampleRateHz: number, rampS = STIMULUS_RAMP_S) {
    this.sampleRateHz = sampleRateHz;
    this.rampSamples = Math.max(1, Math.round(rampS * sampleRateHz));
  }

  /** Peak amplitude now (0..1), for tests and meters. */
  get currentGain(): number {
    return this.gain;
  }

  set({ frequencyHz, levelDbfs, on }: StimulusSetting): void {
    if (frequencyHz > 0 && frequencyHz < this.sampleRateHz / 2) this.frequencyHz = frequencyHz;
    // 0 dBFS is a full-scale sine (peak 1.0); nothing louder is ever produced.
    this.targetGain = on ? 10 ** (Math.min(0, levelDbfs) / 20) : 0;
    this.rampStep = Math.abs(this.targetGain - this.gain) / this.rampSamples;
  }

  fill(out: Float32Array, frames = out.length): void {
    const increment = this.frequencyHz / this.sampleRateHz;
    for (let i = 0; i < frames; i++) {
      if (this.gain < this.targetGain) this.gain = Math.min(this.targetGain, this.gain + this.rampStep);
      else if (this.gain > this.targetGain) this.gain = Math.max(this.targetGain, this.gain - this.rampStep);
      out[i] = this.gain * Math.sin(2 * Math.PI * this.phaseCycles);
      this.phaseCycles += increment;
      if (this.phaseCycles >= 1) this.phaseCycles -= 1;
    }
  }
}
