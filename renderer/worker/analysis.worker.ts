// Analysis worker: wires capture messages to the shared live meter and posts readings.
// All measurement logic lives in shared/; this file only moves samples and messages.

import { TimestampContinuity } from '../../shared/capture/timestamp-continuity.ts';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import type { AudioDataLike, FromWorker, MeterSettings, ToWorker, WorkletBlock } from './messages.ts';

declare const self: DedicatedWorkerGlobalScope;

const SPECTRUM_COLUMNS = 480;
const SPECTRUM_LOW_HZ = 5;

let settings: MeterSettings = { channel: 0, expectedFundamentalHz: null, harmonicCount: 10, mainsHz: 50, stimulusLocked: false };
let meter: LiveMeter | null = null;
let block = new Float32Array(4096);
let spectrumHz = new Float32Array(SPECTRUM_COLUMNS + 1);
const spectrumDbfs = new Float32Array(SPECTRUM_COLUMNS);
const continuity = new TimestampContinuity();
let stopRequested = false;
let lastStatusAt = 0;

const post = (message: FromWorker) => self.postMessage(message);

function meterFor(sampleRateHz: number): LiveMeter {
  if (!meter || meter.config.sampleRateHz !== sampleRateHz) {
    meter = new LiveMeter({ sampleRateHz, ...settings });
    // Log-spaced column edges from a few hertz to Nyquist for the spectrum plot.
    const ratio = sampleRateHz / 2 / SPECTRUM_LOW_HZ;
    spectrumHz = Float32Array.from({ length: SPECTRUM_COLUMNS + 1 }, (_, i) => SPECTRUM_LOW_HZ * ratio ** (i / SPECTRUM_COLUMNS));
  }
  return meter;
}

function analyse(samples: Float32Array, length: number, sampleRateHz: number, channelCount: number): void {
  const live = meterFor(sampleRateHz);
  if (live.push(samples, length)) {
    live.analyzer.reduceSpectrum(spectrumHz, spectrumDbfs);
    post({ type: 'reading', reading: live.reading, spectrumHz, spectrumDbfs });
  }
  const now = performance.now();
  if (now - lastStatusAt > 500) {
    lastStatusAt = now;
    post({ type: 'status', discontinuities: live.discontinuities, channelCount, sampleRateHz });
  }
}

async function readTrack(readable: ReadableStream<AudioDataLike>): Promise<void> {
  const reader = readable.getReader();
  continuity.reset();
  try {
    while (!stopRequested) {
      const { value: audio, done } = await reader.read();
      if (done) break;
      try {
        const frames = audio.numberOfFrames;
        if (block.length < frames) block = new Float32Array(frames); // grows once to the device's block size
        // The fake and some real devices start as mono for a few blocks: a missing channel is silence.
        if (settings.channel < audio.numberOfChannels) {
          audio.copyTo(block, { planeIndex: settings.channel, format: 'f32-planar' });
        } else {
          block.fill(0, 0, frames);
        }
        if (continuity.isGap(audio.timestamp, frames, audio.sampleRate)) meterFor(audio.sampleRate).markBreak(true);
        analyse(block, frames, audio.sampleRate, audio.numberOfChannels);
      } finally {
        audio.close();
      }
    }
  } catch (error) {
    post({ type: 'error', message: `Capture stream failed: ${(error as Error).message}` });
  } finally {
    reader.releaseLock();
    await readable.cancel().catch(() => undefined);
  }
  if (!stopRequested) post({ type: 'capture-ended' });
}

function listenToWorklet(port: MessagePort, sampleRateHz: number): void {
  port.onmessage = (event: MessageEvent<WorkletBlock>) => {
    const { samples, length } = event.data;
    analyse(samples, length, sampleRateHz, 1);
    port.postMessage(event.data, [samples.buffer]); // hand the buffer back for reuse
  };
}

self.onmessage = (event: MessageEvent<ToWorker>) => {
  const message = event.data;
  switch (message.type) {
    case 'configure':
      settings = message.settings;
      meter = null;
      break;
    case 'stimulus-changed':
      meter?.markBreak(false);
      break;
    case 'track-stream':
      stopRequested = false;
      void readTrack(message.readable);
      break;
    case 'worklet-port':
      stopRequested = false;
      listenToWorklet(message.port, message.sampleRateHz);
      break;
    case 'stop':
      stopRequested = true;
      break;
  }
};
