// The demo bench without a page or a clock: a simulated unit rendered as fast as the processor
// allows into the same meter session the analysis worker runs, so a settled reading here is the
// reading the app would show for the same unit, stimulus and trimmer.

import type { StimulusSetting } from '../dsp/sine-source.ts';
import type { Reading } from '../measurement/reading.ts';
import { MeterSession, type MeterSessionSettings } from '../measurement/meter-session.ts';
import type { LiveSeries } from '../trim/trim-assistant.ts';
import { DemoUnit, type DemoUnitParameters } from './demo-unit.ts';
import { logSweep, type LogSweepSpec } from '../dsp/log-sweep.ts';

/** Samples rendered and analysed at a time: about 43 ms at 48 kHz, a capture block's order. */
const BLOCK = 2048;
/** The live series the page keeps and sends with a trim point (TrimPanel's last 60 readings). */
const LIVE_SERIES_LENGTH = 60;

export interface SettledReading {
  /** A copy, the meter's own object being reused for the next reading. */
  reading: Reading;
  /** The readings since the trimmer last moved (or the stimulus changed), as the page sends them. */
  live: LiveSeries;
  /** Seconds of the unit's time it took. */
  seconds: number;
}

export class HeadlessBench {
  readonly sampleRateHz: number;
  readonly unit: DemoUnit;
  private readonly session: MeterSession;
  private readonly block = new Float32Array(BLOCK);
  private live: LiveSeries = { levelsDbfs: [], lfDbfs: [] };
  private lastSequence = -1;
  /** Samples rendered so far: the unit's own time. */
  rendered = 0;

  constructor(sampleRateHz: number, parameters: DemoUnitParameters, noiseSeed: number, settings: MeterSessionSettings) {
    this.sampleRateHz = sampleRateHz;
    this.unit = new DemoUnit(sampleRateHz, parameters, noiseSeed);
    // The simulated unit drops no blocks (see LiveMeterConfig.sampleGuard).
    this.session = new MeterSession(settings, { sampleGuard: false });
  }

  /** A new generator setting and the meter settings that go with it, as the page sends both. */
  setStimulus(setting: StimulusSetting, settings: MeterSessionSettings): void {
    this.unit.setStimulus(setting);
    this.session.stimulusChanged();
    this.session.configure(settings);
    this.restartSeries();
  }

  /** Turns the virtual trimmer; readings restart once it is there. */
  moveTrimmer(turns: number): void {
    this.session.trimmerMoved(this.unit.setTrimmer(turns));
    this.restartSeries();
  }

  /**
   * Plays the sweep once through the unit with the tone off and returns `frames` samples of its
   * output from the sweep's first sample on, as a capture of it would hold (the meter is not fed:
   * no reading spans a sweep).
   */
  sweep(spec: LogSweepSpec, frames: number): Float32Array {
    this.unit.setStimulus({ on: false, frequencyHz: 1000, levelDbfs: -120 });
    this.unit.playOnce(logSweep(spec));
    const out = new Float32Array(frames);
    this.unit.render(out);
    this.rendered += frames;
    return out;
  }

  /**
   * Runs the unit until the meter reports a settled reading, or for `maxSeconds` of the unit's
   * time, whichever comes first; the latest reading either way (null when none came at all). With
   * `stopOnClipping`, a fresh reading flagged as clipping is taken at once, settled or not (the
   * max-level sequence ends on it).
   */
  settle(maxSeconds: number, options: { stopOnClipping?: boolean } = {}): SettledReading | null {
    const start = this.rendered;
    const limit = start + Math.round(maxSeconds * this.sampleRateHz);
    let latest: Reading | null = null;
    while (this.rendered < limit) {
      this.unit.render(this.block);
      this.rendered += BLOCK;
      const meter = this.session.push(this.block, BLOCK, this.sampleRateHz);
      if (!meter) continue;
      const reading = meter.reading;
      // A meter rebuilt for new settings counts its readings from 0 again.
      if (reading.sequence < this.lastSequence) this.lastSequence = -1;
      if (reading.sequence !== this.lastSequence) {
        this.lastSequence = reading.sequence;
        if (!reading.flags.includes('no-signal')) this.addToSeries(reading);
      }
      latest = reading;
      if (reading.settled || (options.stopOnClipping && reading.flags.includes('clipping'))) break;
    }
    if (!latest) return null;
    return {
      reading: JSON.parse(JSON.stringify(latest)) as Reading,
      live: { levelsDbfs: [...this.live.levelsDbfs], lfDbfs: [...this.live.lfDbfs] },
      seconds: (this.rendered - start) / this.sampleRateHz,
    };
  }

  private addToSeries(reading: Reading): void {
    this.live.levelsDbfs.push(reading.fundamental.levelDbfs);
    if (reading.subAudioDbfs !== null) this.live.lfDbfs.push(reading.subAudioDbfs);
    if (this.live.levelsDbfs.length > LIVE_SERIES_LENGTH) this.live.levelsDbfs.shift();
    if (this.live.lfDbfs.length > LIVE_SERIES_LENGTH) this.live.lfDbfs.shift();
  }

  private restartSeries(): void {
    this.live = { levelsDbfs: [], lfDbfs: [] };
  }
}
