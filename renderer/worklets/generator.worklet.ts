// Generator worklet: runs the shared stimulus source (sine or band-limited square) and copies it to
// every output channel.

import { SineSource, type StimulusSetting } from '../../shared/dsp/sine-source.ts';

class SineGenerator extends AudioWorkletProcessor {
  private readonly source = new SineSource(sampleRate);

  constructor(options?: unknown) {
    super(options);
    this.port.onmessage = (event: MessageEvent<StimulusSetting>) => this.source.set(event.data);
  }

  process(_inputs: Float32Array[][], outputs: Float32Array[][]): boolean {
    const channels = outputs[0];
    if (!channels || channels.length === 0) return true;
    this.source.fill(channels[0]);
    for (let ch = 1; ch < channels.length; ch++) channels[ch].set(channels[0]);
    return true;
  }
}

registerProcessor('trimbench-sine', SineGenerator);
