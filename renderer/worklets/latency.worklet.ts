// Latency worklet: plays a burst once and captures the input from the very render quantum the
// burst starts in. Output and input share this processor's frame count, so capture sample k is
// what came back k frames after the burst's first sample left: the round trip, with nothing to
// align by clocks. Used once per chain check; the buffers come from the page.

import type { LatencyCapture, LatencyRequest } from '../worker/messages.ts';

class LatencyProbe extends AudioWorkletProcessor {
  private burst: Float32Array | null = null;
  private played = 0;
  private capture: Float32Array | null = null;
  private captured = 0;
  private channel = 0;

  constructor(options?: unknown) {
    super(options);
    this.port.onmessage = (event: MessageEvent<LatencyRequest>) => {
      const { samples, captureFrames, channel } = event.data;
      this.burst = samples;
      this.played = 0;
      this.capture = new Float32Array(Math.max(captureFrames, samples.length));
      this.captured = 0;
      this.channel = channel;
    };
  }

  process(inputs: Float32Array[][], outputs: Float32Array[][]): boolean {
    const out = outputs[0];
    const frames = out?.[0]?.length ?? 128;
    if (out) for (const channel of out) channel.fill(0);
    const capture = this.capture;
    if (!capture) return true;
    const burst = this.burst;
    if (burst && out && out.length > 0) {
      const n = Math.min(frames, burst.length - this.played);
      for (let i = 0; i < n; i++) out[0][i] = burst[this.played + i];
      for (let ch = 1; ch < out.length; ch++) out[ch].set(out[0]);
      this.played += n;
      if (this.played >= burst.length) this.burst = null;
    }
    const input = inputs[0];
    // A missing channel (a mono device asked for channel 2) is silence: the page refuses it by its estimate.
    const source = input && this.channel < input.length ? input[this.channel] : null;
    const n = Math.min(frames, capture.length - this.captured);
    for (let i = 0; i < n; i++) capture[this.captured + i] = source ? source[i] : 0;
    this.captured += n;
    if (this.captured >= capture.length) {
      this.capture = null;
      this.port.postMessage({ captured: capture } satisfies LatencyCapture, [capture.buffer]);
    }
    return true;
  }
}

registerProcessor('trimbench-latency', LatencyProbe);
