// Generator worklet: runs the shared stimulus source (sine or band-limited square) and copies it to
// every output channel; plays an exponential sweep once on request (the same samples the offline
// `sweep --write` writes).

import { SineSource, type StimulusSetting } from '../../shared/dsp/sine-source.ts';
import type { SweepCommand } from '../worker/messages.ts';

class SineGenerator extends AudioWorkletProcessor {
  private readonly source = new SineSource(sampleRate);
  /** The sweep playing and where it is; handed over once per sweep, dropped when done or stopped. */
  private sweep: Float32Array | null = null;
  private sweepAt = 0;

  constructor(options?: unknown) {
    super(options);
    this.port.onmessage = (event: MessageEvent<StimulusSetting | SweepCommand>) => {
      const data = event.data;
      if ('sweep' in data) {
        this.sweep = data.sweep;
        this.sweepAt = 0;
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
      const n = Math.min(out.length, sweep.length - this.sweepAt);
      for (let i = 0; i < n; i++) out[i] += sweep[this.sweepAt + i];
      this.sweepAt += n;
      if (this.sweepAt >= sweep.length) this.sweep = null;
    }
    for (let ch = 1; ch < channels.length; ch++) channels[ch].set(channels[0]);
    return true;
  }
}

registerProcessor('trimbench-sine', SineGenerator);
