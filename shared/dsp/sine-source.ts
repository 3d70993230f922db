// The stimulus: a phase-continuous sine, or a band-limited square wave at the same frequency and
// phase. Start, stop and level changes ramp linearly over a fixed time so the unit never sees a
// step; a frequency change keeps the phase running; a change of waveform while playing fades out,
// switches at silence and fades back in. Runs inside the generator worklet; fill() allocates nothing.

import { BandLimitedSquare, SQUARE_MAX_LEVEL_DBFS } from './square-wave.ts';

export type Waveform = 'sine' | 'square';

export interface StimulusSetting {
  frequencyHz: number;
  levelDbfs: number;
  on: boolean;
  /** Absent means a sine, as every setting stored before the square wave existed was. */
  waveform?: Waveform;
}

export const STIMULUS_RAMP_S = 0.02;

export class SineSource {
  readonly sampleRateHz: number;
  private readonly rampSamples: number;
  private readonly square: BandLimitedSquare;
  private phaseCycles = 0;
  private frequencyHz = 1000;
  private waveform: Waveform = 'sine';
  /** Set while the old waveform fades out; taken up once the gain reaches 0. */
  private pendingWaveform: Waveform | null = null;
  private gain = 0;
  private targetGain = 0;
  private afterSwitchGain = 0;
  private rampStep = 0;

  constructor(sampleRateHz: number, rampS = STIMULUS_RAMP_S) {
    this.sampleRateHz = sampleRateHz;
    this.rampSamples = Math.max(1, Math.round(rampS * sampleRateHz));
    this.square = new BandLimitedSquare(sampleRateHz);
    this.square.setFrequency(this.frequencyHz);
  }

  /** Amplitude scale now (0..1): a sine's peak, a square's flat top; for tests and meters. */
  get currentGain(): number {
    return this.gain;
  }

  set({ frequencyHz, levelDbfs, on, waveform = 'sine' }: StimulusSetting): void {
    if (frequencyHz > 0 && frequencyHz < this.sampleRateHz / 2) {
      this.frequencyHz = frequencyHz;
      this.square.setFrequency(frequencyHz);
    }
    // 0 dBFS is a full-scale sine (peak 1.0); nothing louder is ever produced. A square is held to
    // the level at which its band-limited edges' overshoot just stays inside full scale.
    const ceilingDbfs = waveform === 'square' ? SQUARE_MAX_LEVEL_DBFS : 0;
    const gain = on ? 10 ** (Math.min(ceilingDbfs, levelDbfs) / 20) : 0;
    if (waveform !== this.waveform && this.gain > 0) {
      this.pendingWaveform = waveform;
      this.afterSwitchGain = gain;
      this.targetGain = 0;
    } else {
      this.waveform = waveform;
      this.pendingWaveform = null;
      this.targetGain = gain;
    }
    this.rampStep = Math.abs(this.targetGain - this.gain) / this.rampSamples;
  }

  fill(out: Float32Array, frames = out.length): void {
    const increment = this.frequencyHz / this.sampleRateHz;
    for (let i = 0; i < frames; i++) {
      if (this.gain < this.targetGain) this.gain = Math.min(this.targetGain, this.gain + this.rampStep);
      else if (this.gain > this.targetGain) this.gain = Math.max(this.targetGain, this.gain - this.rampStep);
      if (this.pendingWaveform !== null && this.gain === 0) {
        this.waveform = this.pendingWaveform;
        this.pendingWaveform = null;
        this.targetGain = this.afterSwitchGain;
        this.rampStep = this.targetGain / this.rampSamples;
      }
      const phase = 2 * Math.PI * this.phaseCycles;
      out[i] = this.gain * (this.waveform === 'square' ? this.square.at(phase) : Math.sin(phase));
      this.phaseCycles += increment;
      if (this.phaseCycles >= 1) this.phaseCycles -= 1;
    }
  }
}
