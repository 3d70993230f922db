// Analysis worker: wires capture messages to the shared live meter and posts readings.
// All measurement logic lives in shared/; this file only moves samples and messages.

import { TimestampContinuity } from '../../shared/capture/timestamp-continuity.ts';
import { MeterSession } from '../../shared/measurement/meter-session.ts';
import { DemoChain } from '../../shared/sim/demo-chain.ts';
import { DemoUnit } from '../../shared/sim/demo-unit.ts';
import { logSweep } from '../../shared/dsp/log-sweep.ts';
import type { AudioDataLike, DemoMode, FromWorker, MeterSettings, ToWorker, WorkletBlock } from './messages.ts';

declare const self: DedicatedWorkerGlobalScope;

const SPECTRUM_COLUMNS = 480;
const SPECTRUM_LOW_HZ = 5;

let settings: MeterSettings = { channel: 0, secondChannel: null, expectedFundamentalHz: null, harmonicCount: 10, mainsHz: 50, stimulusLocked: false, chainFloorThdDb: null };
let session: MeterSession | null = null;
/** The meter of a two-channel unit's channel 2, on the same settings; only on a captured stream. */
let secondSession: MeterSession | null = null;
/** The last captured block did not carry the second input (the next that does starts after a break). */
let secondMissing = false;
let spectrumRateHz = 0;
let block = new Float32Array(4096);
let secondBlock = new Float32Array(4096);
let spectrumHz = new Float32Array(SPECTRUM_COLUMNS + 1);
const spectrumDbfs = new Float32Array(SPECTRUM_COLUMNS);
const continuity = new TimestampContinuity();
let stopRequested = false;
// The demo bench: the simulated unit, or the invented loopback chain while a chain check or a
// calibration runs on it. Both hear every generator command, so switching keeps the stimulus.
let demo: { unit: DemoUnit; chain: DemoChain; timer: ReturnType<typeof setInterval> } | null = null;
let demoMode: DemoMode = 'unit';
let lastStatusAt = 0;

const post = (message: FromWorker) => self.postMessage(message);

/** A sweep's capture being kept: channel 1's samples, allocated once per recording. */
let recording: { samples: Float32Array; captured: number; lastProgressAt: number } | null = null;

function keep(samples: Float32Array, length: number): void {
  const r = recording;
  if (!r) return;
  const n = Math.min(length, r.samples.length - r.captured);
  r.samples.set(samples.subarray(0, n), r.captured);
  r.captured += n;
  const now = performance.now();
  if (r.captured >= r.samples.length) {
    recording = null;
    self.postMessage({ type: 'recorded', samples: r.samples, refusal: null } satisfies FromWorker, [r.samples.buffer]);
  } else if (now - r.lastProgressAt > 200 || r.captured === n) {
    r.lastProgressAt = now;
    post({ type: 'record-progress', captured: r.captured, frames: r.samples.length });
  }
}

function dropRecording(refusal: string): void {
  if (!recording) return;
  recording = null;
  post({ type: 'recorded', samples: null, refusal });
}

function sessionFor(sampleRateHz: number): MeterSession {
  // The demo unit cannot drop blocks: looking for breaks in its samples would only mistake an
  // oscillating, clipping stage for capture trouble.
  session ??= new MeterSession(settings, { sampleGuard: demo === null });
  if (spectrumRateHz !== sampleRateHz) {
    spectrumRateHz = sampleRateHz;
    // Log-spaced column edges from a few hertz to Nyquist for the spectrum plot.
    const ratio = sampleRateHz / 2 / SPECTRUM_LOW_HZ;
    spectrumHz = Float32Array.from({ length: SPECTRUM_COLUMNS + 1 }, (_, i) => SPECTRUM_LOW_HZ * ratio ** (i / SPECTRUM_COLUMNS));
  }
  return session;
}

function analyse(samples: Float32Array, length: number, sampleRateHz: number, channelCount: number): void {
  keep(samples, length);
  const current = sessionFor(sampleRateHz);
  const live = current.push(samples, length, sampleRateHz);
  if (live) {
    const earlierBreaks = current.breaksBeforeThisMeter;
    live.analyzer.reduceSpectrum(spectrumHz, spectrumDbfs);
    live.reading.discontinuities += earlierBreaks;
    post({ type: 'reading', reading: live.reading, spectrumHz, spectrumDbfs });
    live.reading.discontinuities -= earlierBreaks;
  }
  const now = performance.now();
  if (now - lastStatusAt > 500) {
    lastStatusAt = now;
    post({ type: 'status', discontinuities: current.discontinuities, channelCount, sampleRateHz });
  }
}

/**
 * Channel 2's samples, when a second input is read: its own meter, the same breaks as channel 1.
 * A block that does not carry that channel is skipped, not read as silence (silence would pass a
 * crosstalk check on a channel never connected), and the next one that does starts after a break.
 */
function analyseSecond(audio: AudioDataLike, frames: number, gap: boolean): void {
  const channel = settings.secondChannel;
  if (channel === null) return;
  if (channel >= audio.numberOfChannels) {
    secondMissing = true;
    return;
  }
  secondSession ??= new MeterSession(settings, { sampleGuard: true });
  audio.copyTo(secondBlock, { planeIndex: channel, format: 'f32-planar' });
  if (gap || secondMissing) secondSession.captureGap(audio.sampleRate);
  secondMissing = false;
  const live = secondSession.push(secondBlock, frames, audio.sampleRate);
  if (live) post({ type: 'second-reading', reading: live.reading });
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
        if (block.length < frames) {
          // Grows once to the device's block size.
          block = new Float32Array(frames);
          secondBlock = new Float32Array(frames);
        }
        // The fake and some real devices start as mono for a few blocks: the unit's channel 1 is
        // silence until its plane arrives (the readout then says there is no signal).
        if (settings.channel < audio.numberOfChannels) audio.copyTo(block, { planeIndex: settings.channel, format: 'f32-planar' });
        else block.fill(0, 0, frames);
        const gap = continuity.isGap(audio.timestamp, frames, audio.sampleRate);
        if (gap) sessionFor(audio.sampleRate).captureGap(audio.sampleRate);
        // A block lost in the middle of a sweep shifts everything after it: that capture is no sweep's.
        if (gap) dropRecording('The capture lost a block of samples during the sweep. Run the sweep again.');
        analyse(block, frames, audio.sampleRate, audio.numberOfChannels);
        analyseSecond(audio, frames, gap);
      } finally {
        audio.close();
      }
    }
  } catch (error) {
    // The raw text (a DOMException's or a bug's) is for the console; the bench gets what to do.
    console.error('[trimbench] capture stream failed', error);
    const name = (error as { name?: unknown } | null)?.name;
    const kind = typeof name === 'string' && /^[A-Za-z]{1,40}$/.test(name) && name !== 'Error' ? ` (${name})` : '';
    post({
      type: 'error',
      message: `The capture stream stopped unexpectedly${kind}. The generator is stopped; recorded trim points are kept. Press Start capture again.`,
    });
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

/** Runs the simulated unit in real time, every 20 ms, as if it were a capture device (at most 200 ms a tick). */
function startDemo(sampleRateHz: number): void {
  const unit = new DemoUnit(sampleRateHz);
  const chain = new DemoChain(sampleRateHz);
  const slice = new Float32Array(Math.ceil(sampleRateHz * 0.2));
  let rendered = 0;
  const startedAt = performance.now();
  const timer = setInterval(() => {
    if (stopRequested) return;
    // Catch up with the clock, at most one slice at a time so a stalled tab does not burst.
    const due = Math.floor(((performance.now() - startedAt) / 1000) * sampleRateHz) - rendered;
    const frames = Math.min(slice.length, Math.max(0, due));
    if (frames === 0) return;
    if (demoMode === 'loopback') chain.render(slice, frames);
    else unit.render(slice, frames);
    rendered += due > slice.length ? due : frames; // skip what could not be caught up
    analyse(slice, frames, sampleRateHz, 1);
    const captured = chain.takeCapture();
    if (captured) self.postMessage({ type: 'demo-captured', samples: captured, refusal: null } satisfies FromWorker, [captured.buffer]);
  }, 20);
  demo = { unit, chain, timer };
}

self.onmessage = (event: MessageEvent<ToWorker>) => {
  const message = event.data;
  switch (message.type) {
    case 'configure':
      settings = message.settings;
      session?.configure(settings);
      if (settings.secondChannel === null) secondSession = null;
      else secondSession?.configure(settings);
      break;
    case 'stimulus-changed':
      session?.stimulusChanged();
      secondSession?.stimulusChanged();
      break;
    case 'track-stream':
      stopRequested = false;
      void readTrack(message.readable);
      break;
    case 'worklet-port':
      stopRequested = false;
      listenToWorklet(message.port, message.sampleRateHz);
      break;
    case 'demo-start':
      stopRequested = false;
      startDemo(message.sampleRateHz);
      break;
    case 'demo-stimulus':
      demo?.unit.setStimulus(message.setting);
      demo?.chain.setStimulus(message.setting);
      break;
    case 'demo-mode':
      if (demoMode !== message.mode) {
        demoMode = message.mode;
        // Another source from here on: no frame may span the switch.
        session?.stimulusChanged();
      }
      break;
    case 'demo-play-once':
      if (!demo) {
        post({ type: 'demo-captured', samples: null, refusal: 'The demo bench is not running, so nothing can be played through it. Press Start capture.' });
      } else if (demoMode !== 'loopback') {
        post({ type: 'demo-captured', samples: null, refusal: 'The demo bench is set to the simulated unit, not the loopback; the latency is measured on the loopback only.' });
      } else {
        demo.chain.playOnce(message.samples, message.captureFrames);
      }
      break;
    case 'trimmer-moved': {
      const moveSeconds = demo ? demo.unit.setTrimmer(message.turns) : 0;
      session?.trimmerMoved(moveSeconds);
      secondSession?.trimmerMoved(moveSeconds);
      break;
    }
    case 'record-start':
      recording = { samples: new Float32Array(message.frames), captured: 0, lastProgressAt: 0 };
      break;
    case 'record-cancel':
      dropRecording('The sweep was stopped.');
      demo?.unit.playOnce(null);
      break;
    case 'demo-sweep':
      if (demoMode !== 'unit') demo?.unit.playOnce(null);
      else demo?.unit.playOnce(message.spec ? logSweep(message.spec) : null);
      break;
    case 'stop':
      dropRecording('Capture stopped during the sweep.');
      stopRequested = true;
      if (demo) clearInterval(demo.timer);
      break;
  }
};
