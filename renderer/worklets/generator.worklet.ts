// The stimulus: a phase-continuous sine. Level changes, start and stop ramp over RAMP_S so
// the unit never sees a click; frequency changes keep the phase running (no jump).

import type { GeneratorCommand } from '../worker/messages.ts';

const RAMP_S = 0.02;

class SineGenerator extends AudioWorkletProcessor {
  private phaseCycles = 0;
  private frequencyHz = 1000;
  private gain = 0;
  private targetGain = 0;
  private rampStep = 0;

  constructor(options?: unknown) {
    super(options);
    this.port.onmessage = (event: MessageEvent<GeneratorCommand>) => {
      const { frequencyHz, levelDbfs, on } = event.data;
      if (frequencyHz > 0 && frequencyHz < sampleRate / 2) this.frequencyHz = frequencyHz;
      this.targetGain = on ? 10 ** (Math.min(0, levelDbfs) / 20) : 0;
      this.rampStep = Math.abs(this.targetGain - this.gain) / (RAMP_S * sampleRate);
    };
  }

  process(_inputs: Float32Array[][], outputs: Float32Array[][]): boolean {
    const channels = outputs[0];
    if (!channels || channels.length === 0) return true;
    const frames = channels[0].length;
    const increment = this.frequencyHz / sampleRate;
    for (let i = 0; i < frames; i++) {
      if (this.gain < this.targetGain) this.gain = Math.min(this.targetGain, this.gain + this.rampStep);
      else if (this.gain > this.targetGain) this.gain = Math.max(this.targetGain, this.gain - this.rampStep);
      const sample = this.gain * Math.sin(2 * Math.PI * this.phaseCycles);
      this.phaseCycles += increment;
      if (this.phaseCycles >= 1) this.phaseCycles -= 1;
      for (let ch = 0; ch < channels.length; ch++) channels[ch][i] = sample;
    }
    return true;
  }
}

registerProcessor('trimbench-sine', SineGenerator);
