// Messages between the page, the analysis worker and the audio worklets.

import type { LogSweepSpec } from '../../shared/dsp/log-sweep.ts';
import type { StimulusSetting } from '../../shared/dsp/sine-source.ts';
import type { MeterSessionSettings } from '../../shared/measurement/meter-session.ts';
import type { Reading } from '../../shared/measurement/reading.ts';

export interface MeterSettings extends MeterSessionSettings {
  /** Input channel (0-based) that carries the unit's output (its channel 1). */
  channel: number;
  /** Input channel (0-based) that carries a two-channel unit's channel 2, read by a meter of its own; null for one channel. */
  secondChannel: number | null;
}

export type ToWorker =
  | { type: 'configure'; settings: MeterSettings }
  /** An intended change (stimulus level/frequency/on-off): start a fresh stretch, count nothing. */
  | { type: 'stimulus-changed' }
  /** Capture through MediaStreamTrackProcessor: the track's readable stream, transferred. */
  | { type: 'track-stream'; readable: ReadableStream<AudioDataLike> }
  /** Capture through the worklet fallback: blocks arrive on this port and are handed back on it. */
  | { type: 'worklet-port'; port: MessagePort; sampleRateHz: number }
  /** The demo bench: the simulated unit runs here in real time and is the capture. */
  | { type: 'demo-start'; sampleRateHz: number }
  | { type: 'demo-stimulus'; setting: GeneratorCommand }
  /** The demo bench as the simulated unit, or as a loopback (an invented interface chain) for a chain check or calibration. */
  | { type: 'demo-mode'; mode: DemoMode }
  /**
   * The demo bench plays `samples` once through its current mode and answers `demo-captured` with
   * `captureFrames` samples captured from the burst's first sample on (the latency measurement).
   */
  | { type: 'demo-play-once'; samples: Float32Array; captureFrames: number }
  /**
   * The technician moved the trimmer (an intended break for any input, like a stimulus change);
   * the demo unit's virtual trimmer turns there.
   */
  | { type: 'trimmer-moved'; turns: number }
  /** Keep the next `frames` samples of the unit's channel 1 (a sweep's capture), answered by `recorded`. */
  | { type: 'record-start'; frames: number }
  /** Stop keeping them (Esc, or the sweep was stopped): answered by `recorded` with no samples. */
  | { type: 'record-cancel' }
  /** The demo bench plays the sweep once through the simulated unit, or stops it at once (spec null). */
  | { type: 'demo-sweep'; spec: LogSweepSpec | null }
  | { type: 'stop' };

export type FromWorker =
  /** A reading of the unit's channel 1 with the spectrum shown. */
  | { type: 'reading'; reading: Reading; spectrumHz: Float32Array; spectrumDbfs: Float32Array }
  /** A reading of the unit's channel 2 (its input is `MeterSettings.secondChannel`). */
  | { type: 'second-reading'; reading: Reading }
  | { type: 'status'; discontinuities: number; channelCount: number; sampleRateHz: number }
  | { type: 'capture-ended' }
  /** The answer to `demo-play-once`: the capture, or why there is none. */
  | { type: 'demo-captured'; samples: Float32Array | null; refusal: string | null }
  /** How much of a recording is kept so far, about five times a second. */
  | { type: 'record-progress'; captured: number; frames: number }
  /** The recording, or why there is none. */
  | { type: 'recorded'; samples: Float32Array | null; refusal: string | null }
  | { type: 'error'; message: string };

/** A captured block from the worklet: samples of the chosen channel, handed back after use. */
export interface WorkletBlock {
  samples: Float32Array;
  length: number;
}

/** The parts of WebCodecs AudioData the worker uses (not in every TypeScript lib yet). */
export interface AudioDataLike {
  readonly timestamp: number;
  readonly numberOfFrames: number;
  readonly numberOfChannels: number;
  readonly sampleRate: number;
  copyTo(destination: Float32Array, options: { planeIndex: number; format: 'f32-planar' }): void;
  close(): void;
}

export type DemoMode = 'unit' | 'loopback';

/** Page → latency worklet: play these once and capture the input channel from the same frame on. */
export interface LatencyRequest {
  samples: Float32Array;
  captureFrames: number;
  channel: number;
}

/** Latency worklet → page: the capture, sample 0 at the stimulus's first sample. */
export interface LatencyCapture {
  captured: Float32Array;
}

/** What the page tells the generator worklet (or the demo unit). */
export type GeneratorCommand = StimulusSetting;

/**
 * Page → generator worklet: play these samples once (logSweep(spec), computed on the page once per
 * sweep and transferred, so the audio thread never stalls on them), or stop a sweep at once (null).
 * A message of its own beside the tone's settings.
 */
export interface SweepCommand {
  sweep: Float32Array | null;
}
