// Generator worklet: runs the shared stimulus source (sine or band-limited square) and copies it to
// every output channel; plays an exponential sweep once on request (the same samples the offline
// `sweep --write` writes).

import { SineSource, STIMULUS_RAMP_S, type StimulusSetting } from '../../shared/dsp/sine-source.ts';
import type { SweepCommand } from '../worker/messages.ts';

class SineGenerator extends AudioWorkletProcessor {
  private readonly source = new SineSource(sampleRate);
  /** The sweep playing and where it is; handed over once per sweep, dropped when done or stopped. */
  private sweep: Float32Array | null = null;
  private sweepAt = 0;
  /** Samples left of the fade-out of a sweep stopped mid-way; 0 while it plays on. */
  private fadeLeft = 0;
  /** A stopped sweep fades out over the tone's own ramp time: stopped at once, without a step into the unit. */
  private readonly fadeSamples = Math.max(1, Math.round(STIMULUS_RAMP_S * sampleRate));

  constructor(options?: unknown) {
    super(options);
    this.port.onmessage = (event: MessageEvent<StimulusSetting | SweepCommand>) => {
      const data = event.data;
      if ('sweep' in data) {
        if (data.sweep === null) {
          if (this.sweep && this.fadeLeft === 0) this.fadeLeft = this.fadeSamples;
        } else {
          this.sweep = data.sweep;
          this.sweepAt = 0;
          this.fadeLeft = 0;
        }
      } else this.source.set(data);
    };
  }

  process(_inputs: Float32Array[][], outputs: Float32Array[][]): boolean {
    const channels = outputs[0];
    if (!channels || channels.length === 0) return true;
    this.source.fill(channels[0]);
    const sweep = this.sweep;
    if (sweep) {
      const out = channels[0];
      const fading = this.fadeLeft > 0;
      const n = Math.min(out.length, sweep.length - this.sweepAt, fading ? this.fadeLeft : Number.POSITIVE_INFINITY);
      for (let i = 0; i < n; i++) {
        const gain = fading ? (this.fadeLeft - i) / this.fadeSamples : 1;
        out[i] += gain * sweep[this.sweepAt + i];
      }
      this.sweepAt += n;
      if (fading) this.fadeLeft -= n;
      if (this.sweepAt >= sweep.length || (fading && this.fadeLeft <= 0)) {
        this.sweep = null;
        this.fadeLeft = 0;
      }
    }
    for (let ch = 1; ch < channels.length; ch++) channels[ch].set(channels[0]);
    return true;
  }
}

registerProcessor('trimbench-sine', SineGenerator);
