// The page's side of the audio path: opens the input with every browser voice-processing step
// off (and refuses to measure if the browser kept one on), runs the stimulus worklet on the
// chosen output, and streams the capture to the analysis worker.

import type { Reading } from '../../shared/measurement/reading.ts';
import { logSweep, type LogSweepSpec } from '../../shared/dsp/log-sweep.ts';
import type { DemoMode, GeneratorCommand, LatencyCapture, LatencyRequest, SweepCommand } from '../worker/messages.ts';
import generatorWorkletUrl from '../worklets/generator.worklet.ts?worker&url';
import captureWorkletUrl from '../worklets/capture.worklet.ts?worker&url';
import latencyWorkletUrl from '../worklets/latency.worklet.ts?worker&url';
import type { FromWorker, MeterSettings, ToWorker } from '../worker/messages.ts';

export type { DemoMode } from '../worker/messages.ts';
import { problemText } from '../problem-text.ts';

export class AudioProblem extends Error {
  override name = 'AudioProblem';
}

export interface AudioDevices {
  inputs: MediaDeviceInfo[];
  outputs: MediaDeviceInfo[];
}

export type CapturePath = 'track-processor' | 'worklet' | 'demo';

/** The input choice that selects the simulated unit instead of a device. */
export const DEMO_INPUT = 'demo-bench';
const DEMO_SAMPLE_RATE_HZ = 48000;

export interface BenchAudioOptions {
  inputDeviceId: string | null;
  outputDeviceId: string | null;
  sampleRateHz: number | null;
  meter: MeterSettings;
}

export interface BenchAudioEvents {
  onReading(reading: Reading, spectrumHz: Float32Array, spectrumDbfs: Float32Array): void;
  /** A reading of a two-channel unit's channel 2 (only on a captured stream with a second input chosen). */
  onSecondReading(reading: Reading): void;
  onStatus(status: { discontinuities: number; channelCount: number; sampleRateHz: number }): void;
  /** Device lost or capture failed: the generator is already muted when this is called. */
  onProblem(message: string): void;
}

interface TrackProcessorConstructor {
  new (init: { track: MediaStreamTrack }): { readable: ReadableStream };
}

const VOICE_PROCESSING = ['echoCancellation', 'noiseSuppression', 'autoGainControl'] as const;
const VOICE_PROCESSING_NAMES: Record<(typeof VOICE_PROCESSING)[number], string> = {
  echoCancellation: 'echo cancellation',
  noiseSuppression: 'noise suppression',
  autoGainControl: 'automatic gain control',
};

export async function listDevices(): Promise<AudioDevices> {
  if (!navigator.mediaDevices?.enumerateDevices) {
    throw new AudioProblem('This window has no access to audio devices (media devices are unavailable).');
  }
  const devices = await navigator.mediaDevices.enumerateDevices();
  return {
    inputs: devices.filter((d) => d.kind === 'audioinput'),
    outputs: devices.filter((d) => d.kind === 'audiooutput'),
  };
}

/** Turns getUserMedia's DOMException into what a technician can act on. */
function describeOpenFailure(error: unknown): AudioProblem {
  const name = (error as { name?: string })?.name;
  switch (name) {
    case 'NotAllowedError':
    case 'SecurityError':
      return new AudioProblem(
        'Permission to use the audio input was refused. Allow microphone access for Trimbench in the system settings, then start capture again.',
      );
    case 'NotFoundError':
    case 'OverconstrainedError':
      return new AudioProblem('No audio input device found. Connect the audio interface, then choose it under Input.');
    case 'NotReadableError':
    case 'AbortError':
      return new AudioProblem('The audio input could not be opened: another program may be using it, or the device stopped responding.');
    default:
      // Anything else is unexpected: its name is worth reporting, its raw text is not for the bench.
      return new AudioProblem(
        problemText(error, 'The audio input could not be opened', 'Check that no other program uses the interface, then press Start capture again.'),
      );
  }
}

export class BenchAudio {
  private stopped = false;
  /** The pending latency capture of the demo bench (answered by the worker's `demo-captured`). */
  private demoCapture: { resolve(samples: Float32Array): void; reject(error: Error): void } | null = null;
  private generatorCommand: GeneratorCommand = { frequencyHz: 1000, levelDbfs: -20, on: false };
  /** The sweep being played and captured (answered by the worker's `recorded`). */
  private sweepCapture: { resolve(samples: Float32Array): void; reject(error: Error): void; progress(captured: number, frames: number): void; started: boolean; spec: LogSweepSpec } | null = null;

  readonly capturePath: CapturePath;
  readonly sampleRateHz: number;
  private readonly worker: Worker;
  private readonly events: BenchAudioEvents;
  /** The real audio path; absent for the demo bench, whose stimulus and unit live in the worker. */
  private readonly device: {
    stream: MediaStream;
    context: AudioContext;
    generator: AudioWorkletNode;
    outputDeviceId: string | null;
  } | null;

  private constructor(parts: {
    capturePath: CapturePath;
    sampleRateHz: number;
    worker: Worker;
    events: BenchAudioEvents;
    device: BenchAudio['device'];
  }) {
    this.capturePath = parts.capturePath;
    this.sampleRateHz = parts.sampleRateHz;
    this.worker = parts.worker;
    this.events = parts.events;
    this.device = parts.device;
  }

  /** Starts the simulated unit (no device, no sound): the whole trim can be practised with it. */
  static startDemo(meter: MeterSettings, events: BenchAudioEvents): BenchAudio {
    const worker = new Worker(new URL('../worker/analysis.worker.ts', import.meta.url), { type: 'module', name: 'analysis' });
    worker.postMessage({ type: 'configure', settings: meter } satisfies ToWorker);
    worker.postMessage({ type: 'demo-start', sampleRateHz: DEMO_SAMPLE_RATE_HZ } satisfies ToWorker);
    const audio = new BenchAudio({ capturePath: 'demo', sampleRateHz: DEMO_SAMPLE_RATE_HZ, worker, events, device: null });
    audio.listen(null);
    return audio;
  }

  static async start(options: BenchAudioOptions, events: BenchAudioEvents): Promise<BenchAudio> {
    if (options.inputDeviceId === DEMO_INPUT) return BenchAudio.startDemo(options.meter, events);
    if (!navigator.mediaDevices?.getUserMedia) throw new AudioProblem('This window has no access to audio input.');
    let stream: MediaStream;
    try {
      stream = await navigator.mediaDevices.getUserMedia({
        audio: {
          deviceId: options.inputDeviceId ? { exact: options.inputDeviceId } : undefined,
          echoCancellation: false,
          noiseSuppression: false,
          autoGainControl: false,
          // Enough channels for both inputs the unit is read on (an interface may have more than two).
          channelCount: { ideal: Math.max(2, options.meter.channel + 1, (options.meter.secondChannel ?? 0) + 1) },
          sampleRate: options.sampleRateHz ? { ideal: options.sampleRateHz } : undefined,
        },
        video: false,
      });
    } catch (error) {
      throw describeOpenFailure(error);
    }
    const track = stream.getAudioTracks()[0];
    const settings = track.getSettings();
    const stillOn = VOICE_PROCESSING.filter((key) => settings[key] === true).map((key) => VOICE_PROCESSING_NAMES[key]);
    if (stillOn.length > 0) {
      stream.getTracks().forEach((t) => t.stop());
      throw new AudioProblem(
        `The browser kept ${stillOn.join(' and ')} on for this input, which alters the signal. Nothing is measured; choose another input or device.`,
      );
    }

    // The track's own rate wins: a capture device may ignore the rate asked for.
    const sampleRateHz = settings.sampleRate ?? options.sampleRateHz ?? 48000;
    const context = new AudioContext({ sampleRate: sampleRateHz, latencyHint: 'playback' });
    const worker = new Worker(new URL('../worker/analysis.worker.ts', import.meta.url), { type: 'module', name: 'analysis' });
    try {
      const sinkCapable = context as AudioContext & { setSinkId?: (id: string) => Promise<void> };
      if (options.outputDeviceId && sinkCapable.setSinkId) await sinkCapable.setSinkId(options.outputDeviceId);
      await context.audioWorklet.addModule(generatorWorkletUrl);
      const generator = new AudioWorkletNode(context, 'trimbench-sine', { numberOfInputs: 0, outputChannelCount: [2] });
      generator.connect(context.destination);
      await context.resume();

      const post = (message: ToWorker, transfer: Transferable[] = []) => worker.postMessage(message, transfer);
      post({ type: 'configure', settings: options.meter });
      const TrackProcessor = (globalThis as { MediaStreamTrackProcessor?: TrackProcessorConstructor }).MediaStreamTrackProcessor;
      let capturePath: CapturePath;
      if (TrackProcessor) {
        const { readable } = new TrackProcessor({ track });
        post({ type: 'track-stream', readable }, [readable as unknown as Transferable]);
        capturePath = 'track-processor';
      } else {
        await context.audioWorklet.addModule(captureWorkletUrl);
        const tap = new AudioWorkletNode(context, 'trimbench-capture', {
          numberOfInputs: 1,
          numberOfOutputs: 1,
          processorOptions: { channel: options.meter.channel },
        });
        const { port1, port2 } = new MessageChannel();
        tap.port.postMessage({ port: port1 }, [port1]);
        post({ type: 'worklet-port', port: port2, sampleRateHz }, [port2]);
        const silent = new GainNode(context, { gain: 0 }); // keeps the tap pulled by the graph
        context.createMediaStreamSource(stream).connect(tap).connect(silent).connect(context.destination);
        capturePath = 'worklet';
      }
      const audio = new BenchAudio({
        capturePath,
        sampleRateHz,
        worker,
        events,
        device: { stream, context, generator, outputDeviceId: options.outputDeviceId },
      });
      audio.listen(track);
      return audio;
    } catch (error) {
      worker.terminate();
      void context.close();
      stream.getTracks().forEach((t) => t.stop());
      throw error instanceof AudioProblem
        ? error
        : new AudioProblem(problemText(error, 'The audio path could not be set up', 'Check the input, output and sample rate chosen, then press Start capture again.'));
    }
  }

  private listen(track: MediaStreamTrack | null): void {
    this.worker.onmessage = (event: MessageEvent<FromWorker>) => {
      // A reading already on its way when capture stopped must not bring the readout back.
      if (this.stopped) return;
      const message = event.data;
      if (message.type === 'reading') this.events.onReading(message.reading, message.spectrumHz, message.spectrumDbfs);
      else if (message.type === 'second-reading') this.events.onSecondReading(message.reading);
      else if (message.type === 'record-progress') {
        const pending = this.sweepCapture;
        if (!pending) return;
        // The capture runs: only now the sweep starts, so the capture holds it from its first sample.
        if (!pending.started) {
          pending.started = true;
          this.playSweep(pending.spec);
        }
        pending.progress(message.captured, message.frames);
      } else if (message.type === 'recorded') {
        const pending = this.sweepCapture;
        this.sweepCapture = null;
        // The sweep is over (or stopped): like any stimulus change, no reading spans it.
        this.worker.postMessage({ type: 'stimulus-changed' } satisfies ToWorker);
        if (message.samples) pending?.resolve(message.samples);
        else pending?.reject(new AudioProblem(message.refusal ?? 'Nothing was captured.'));
      }
      else if (message.type === 'demo-captured') {
        const pending = this.demoCapture;
        this.demoCapture = null;
        if (message.samples) pending?.resolve(message.samples);
        else pending?.reject(new AudioProblem(message.refusal ?? 'The demo bench captured nothing.'));
      } else if (message.type === 'status') this.events.onStatus(message);
      else if (message.type === 'capture-ended') this.fail('The capture stream ended: the input device may have been unplugged.');
      else this.fail(message.message);
    };
    this.worker.onerror = (event) => {
      // A crash in the worker is a bug: the details go to the console, the bench gets what to do.
      console.error('[trimbench] analysis worker stopped', event.message, event.filename, event.lineno);
      this.fail('The analysis stopped unexpectedly. The generator is stopped; recorded trim points are kept. Press Start capture again.');
    };
    if (!track) return;
    track.addEventListener('ended', () =>
      this.fail('The input device was disconnected. The generator is stopped; recorded trim points are kept. Reconnect it and start capture again.'),
    );
    navigator.mediaDevices.addEventListener('devicechange', this.checkOutputStillThere);
  }

  private readonly checkOutputStillThere = async () => {
    const outputDeviceId = this.device?.outputDeviceId;
    if (this.stopped || !outputDeviceId) return;
    const { outputs } = await listDevices();
    if (!outputs.some((d) => d.deviceId === outputDeviceId)) {
      this.fail('The output device was disconnected. The generator is stopped; recorded trim points are kept.');
    }
  };

  private fail(message: string): void {
    if (this.stopped) return;
    this.mute();
    this.stop();
    this.events.onProblem(message);
  }

  /** Sets the stimulus; the analysis starts a fresh stretch so no reading spans the change. */
  setGenerator(command: GeneratorCommand): void {
    if (this.stopped) return;
    // A tone turned on during a sweep would be captured with it: the sweep stops, and nothing is recorded.
    if (command.on) this.stopSweep();
    const changed =
      command.on !== this.generatorCommand.on ||
      command.frequencyHz !== this.generatorCommand.frequencyHz ||
      command.levelDbfs !== this.generatorCommand.levelDbfs ||
      (command.waveform ?? 'sine') !== (this.generatorCommand.waveform ?? 'sine');
    this.generatorCommand = command;
    if (this.device) this.device.generator.port.postMessage(command);
    else this.worker.postMessage({ type: 'demo-stimulus', setting: command } satisfies ToWorker);
    if (changed) this.worker.postMessage({ type: 'stimulus-changed' } satisfies ToWorker);
  }

  /**
   * The technician moved the trimmer to `turns`: no reading or average spans the move (for any
   * input), and the demo bench's virtual trimmer turns there.
   */
  trimmerMoved(turns: number): void {
    if (!this.stopped) this.worker.postMessage({ type: 'trimmer-moved', turns } satisfies ToWorker);
  }

  /** True on the demo bench (no device: the unit or the loopback is simulated in the worker). */
  get isDemo(): boolean {
    return this.device === null;
  }

  /**
   * The demo bench as the simulated unit ('unit', the default) or as a loopback of an invented
   * interface chain ('loopback', shared/sim/demo-chain.ts) while a chain check or a level
   * calibration runs on it. No reading spans the switch. Does nothing on a real device.
   */
  setDemoMode(mode: DemoMode): void {
    if (!this.stopped && this.isDemo) this.worker.postMessage({ type: 'demo-mode', mode } satisfies ToWorker);
  }

  /**
   * Plays `stimulus` once on the output and resolves with `captureFrames` samples of the input
   * channel, sample 0 captured in the same render quantum as the stimulus's first sample (the
   * round trip then is the delay of the stimulus inside the capture). Mute the generator first.
   */
  async captureRoundTrip(stimulus: Float32Array, captureFrames: number, channel: number, timeoutMs = 10_000): Promise<Float32Array> {
    if (this.stopped) throw new AudioProblem('Capture has stopped; press Start capture, then run the chain check again.');
    const samples = stimulus.slice();
    // The burst is an intended change like any stimulus: no reading spans it.
    this.worker.postMessage({ type: 'stimulus-changed' } satisfies ToWorker);
    const captured = new Promise<Float32Array>((resolve, reject) => {
      const timer = setTimeout(() => {
        cleanup();
        reject(new AudioProblem(`No capture came back within ${Math.round(timeoutMs / 1000)} s of playing the latency stimulus; check the interface is running, then try again.`));
      }, timeoutMs);
      let cleanup = () => clearTimeout(timer);
      const done = (result: Float32Array) => {
        cleanup();
        resolve(result);
      };
      const fail = (error: Error) => {
        cleanup();
        reject(error);
      };
      if (!this.device) {
        this.demoCapture = { resolve: done, reject: fail };
        this.worker.postMessage({ type: 'demo-play-once', samples, captureFrames } satisfies ToWorker, [samples.buffer]);
        return;
      }
      const { context, stream } = this.device;
      // A probe in the same audio graph plays and captures: one frame count for both, no clocks to align.
      void context.audioWorklet
        .addModule(latencyWorkletUrl)
        .then(() => {
          const probe = new AudioWorkletNode(context, 'trimbench-latency', { numberOfInputs: 1, numberOfOutputs: 1, outputChannelCount: [2] });
          const source = context.createMediaStreamSource(stream);
          source.connect(probe);
          probe.connect(context.destination);
          const previous = cleanup;
          cleanup = () => {
            previous();
            source.disconnect();
            probe.disconnect();
            probe.port.onmessage = null;
          };
          probe.port.onmessage = (event: MessageEvent<LatencyCapture>) => done(event.data.captured);
          probe.port.postMessage({ samples, captureFrames, channel } satisfies LatencyRequest, [samples.buffer]);
        })
        .catch((error: unknown) => fail(new AudioProblem(problemText(error, 'The latency probe could not be started', 'Run the chain check again; if this stays, report it.'))));
    });
    return captured;
  }

  /**
   * Plays the sweep once (logSweep(spec), the samples `sweep --write` writes) and resolves with
   * `frames` samples of the unit's channel 1, captured from just before the sweep's first sample.
   * The tone is muted first; mute() stops the sweep at once and rejects.
   */
  recordSweep(spec: LogSweepSpec, frames: number, progress: (captured: number, frames: number) => void): Promise<Float32Array> {
    if (this.stopped) return Promise.reject(new AudioProblem('Capture has stopped; press Start capture, then run the sweep again.'));
    if (this.sweepCapture) return Promise.reject(new AudioProblem('A sweep is already playing.'));
    this.setGenerator({ ...this.generatorCommand, on: false });
    return new Promise<Float32Array>((resolve, reject) => {
      this.sweepCapture = { resolve, reject, progress, started: false, spec };
      this.worker.postMessage({ type: 'stimulus-changed' } satisfies ToWorker);
      this.worker.postMessage({ type: 'record-start', frames } satisfies ToWorker);
    });
  }

  private playSweep(spec: LogSweepSpec | null): void {
    if (!this.device) {
      this.worker.postMessage({ type: 'demo-sweep', spec } satisfies ToWorker);
      return;
    }
    const sweep = spec ? logSweep(spec) : null;
    this.device.generator.port.postMessage({ sweep } satisfies SweepCommand, sweep ? [sweep.buffer] : []);
  }

  /** Stops a sweep at once and drops its capture; nothing is recorded. */
  stopSweep(): void {
    if (!this.sweepCapture) return;
    // A progress message already on its way must not start the sweep after this.
    this.sweepCapture.started = true;
    this.playSweep(null);
    this.worker.postMessage({ type: 'record-cancel' } satisfies ToWorker);
  }

  /** Silence from the generator: the tone off, and a sweep stopped at once. */
  mute(): void {
    this.stopSweep();
    this.setGenerator({ ...this.generatorCommand, on: false });
  }

  configureMeter(settings: MeterSettings): void {
    this.worker.postMessage({ type: 'configure', settings } satisfies ToWorker);
  }

  stop(): void {
    if (this.stopped) return;
    this.demoCapture?.reject(new AudioProblem('Capture stopped before the latency capture came back.'));
    this.demoCapture = null;
    this.sweepCapture?.reject(new AudioProblem('Capture stopped during the sweep.'));
    this.sweepCapture = null;
    this.device?.generator.port.postMessage({ sweep: null } satisfies SweepCommand);
    this.device?.generator.port.postMessage({ ...this.generatorCommand, on: false });
    this.stopped = true;
    navigator.mediaDevices?.removeEventListener('devicechange', this.checkOutputStillThere);
    this.worker.postMessage({ type: 'stop' } satisfies ToWorker);
    this.device?.stream.getTracks().forEach((t) => t.stop());
    // Let the 20 ms ramp-down play out before the context goes.
    setTimeout(() => {
      this.worker.terminate();
      void this.device?.context.close();
    }, 60);
  }
}
