// The live measurement loop shared by the analysis worker and the tests: captured blocks go in,
// settled-or-not readings come out several times a second, never computed across a capture
// discontinuity. Owns every buffer it uses; push() allocates nothing in the steady state.

import { GlitchGuard } from '../capture/glitch-guard.ts';
import { DEFAULT_ANALYZER_OPTIONS, FrameAnalyzer } from './frame-analyzer.ts';
import { createHarmonicAnalysis, type Reading } from './reading.ts';
import { SettleTracker } from './settle.ts';
import { SubAudioMeter } from './sub-audio.ts';
import { averageLockedFrames } from './synchronous-average.ts';

export interface LiveMeterConfig {
  sampleRateHz: number;
  /** The stimulus frequency when known; sets the frame length (long enough for low tones). */
  expectedFundamentalHz: number | null;
  harmonicCount: number;
  readingsPerSecond: number;
  mainsHz: 50 | 60;
  bandLowHz: number;
  bandHighHz: number;
  /**
   * Generator and capture run on one clock, so the stimulus frequency is exact: frames holding
   * whole cycles are analysed coherently and averaged in step with the stimulus.
   */
  stimulusLocked: boolean;
  /** Frames averaged in step with a locked stimulus (1 = no averaging). */
  synchronousAverages: number;
  /**
   * Look for dropped or inserted blocks in the samples themselves. Off only for a source that cannot
   * drop blocks (the in-process demo bench), where a clipping, oscillating unit would otherwise look
   * like a stream of capture breaks.
   */
  sampleGuard: boolean;
}

export const DEFAULT_LIVE_METER_CONFIG: Omit<LiveMeterConfig, 'sampleRateHz'> = {
  expectedFundamentalHz: null,
  harmonicCount: DEFAULT_ANALYZER_OPTIONS.harmonicCount,
  readingsPerSecond: 6,
  mainsHz: DEFAULT_ANALYZER_OPTIONS.mainsHz,
  bandLowHz: DEFAULT_ANALYZER_OPTIONS.bandLowHz,
  bandHighHz: DEFAULT_ANALYZER_OPTIONS.bandHighHz,
  stimulusLocked: false,
  synchronousAverages: 4,
  sampleGuard: true,
};

// Cycles of the fundamental per frame: the 7-term window's main lobe spans ±7 bins and each
// tone is fitted on ±3 more, so harmonics 12 bins apart never share fit bins.
export const CYCLES_PER_FRAME = 12;
const LOWEST_EXPECTED_HZ = 20;
const MIN_FRAME = 8192;
const MAX_FRAME = 131072;

/** Power-of-two frame length holding at least CYCLES_PER_FRAME cycles of the expected tone. */
export function frameSizeFor(sampleRateHz: number, expectedFundamentalHz: number | null): number {
  const lowestHz = expectedFundamentalHz && expectedFundamentalHz > 0 ? expectedFundamentalHz : LOWEST_EXPECTED_HZ;
  const wanted = (sampleRateHz * CYCLES_PER_FRAME) / lowestHz;
  return Math.min(MAX_FRAME, Math.max(MIN_FRAME, 2 ** Math.ceil(Math.log2(wanted))));
}

export class LiveMeter {
  readonly config: LiveMeterConfig;
  readonly frameSize: number;
  readonly analyzer: FrameAnalyzer;
  readonly reading: Reading;
  private readonly guard: GlitchGuard;
  private readonly settle = new SettleTracker();
  private readonly subAudio: SubAudioMeter | null;
  /** Frames averaged in step with the stimulus (1 when it is not locked and coherent). */
  private readonly averageDepth: number;
  private readonly knownFundamentalHz: number | null;
  private readonly ring: Float32Array;
  private readonly frame: Float64Array;
  private readonly hopSamples: number;
  private written = 0;
  private cleanFrom = 0;
  private nextReadingAt = 0;
  private announcedBreaks = 0;

  constructor(config: Partial<LiveMeterConfig> & Pick<LiveMeterConfig, 'sampleRateHz'>) {
    this.config = { ...DEFAULT_LIVE_METER_CONFIG, ...config };
    const { sampleRateHz, expectedFundamentalHz, readingsPerSecond, stimulusLocked } = this.config;
    this.frameSize = frameSizeFor(sampleRateHz, expectedFundamentalHz);
    this.analyzer = new FrameAnalyzer(this.frameSize, sampleRateHz, {
      harmonicCount: this.config.harmonicCount,
      mainsHz: this.config.mainsHz,
      bandLowHz: this.config.bandLowHz,
      bandHighHz: this.config.bandHighHz,
    });
    this.guard = new GlitchGuard(sampleRateHz);
    if (expectedFundamentalHz) this.guard.setToneHz(expectedFundamentalHz);
    this.subAudio = expectedFundamentalHz ? new SubAudioMeter(sampleRateHz, expectedFundamentalHz) : null;
    this.knownFundamentalHz = stimulusLocked ? expectedFundamentalHz : null;
    const cycles = expectedFundamentalHz ? (expectedFundamentalHz * this.frameSize) / sampleRateHz : 0.5;
    const coherent = this.knownFundamentalHz !== null && Math.abs(cycles - Math.round(cycles)) < 1e-6;
    this.averageDepth = coherent ? Math.max(1, Math.round(this.config.synchronousAverages)) : 1;
    this.ring = new Float32Array(this.frameSize * this.averageDepth);
    this.frame = new Float64Array(this.frameSize);
    this.hopSamples = Math.round(sampleRateHz / readingsPerSecond);
    this.reading = {
      ...createHarmonicAnalysis(),
      sequence: 0,
      sampleRateHz,
      frameSize: this.frameSize,
      discontinuities: 0,
      settled: false,
      settleProgress: 0,
      subAudioDbfs: null,
    };
  }

  /** Capture discontinuities seen so far (found in the samples or announced by the capture path). */
  get discontinuities(): number {
    return this.guard.count + this.announcedBreaks;
  }

  /**
   * Starts a new clean stretch `holdOffSamples` after the next sample. `counted` for a capture
   * discontinuity (e.g. a timestamp gap); not counted for an intended change such as a stimulus
   * step, whose effect arrives at the input only after the interface's latency.
   */
  markBreak(counted: boolean, holdOffSamples = 0): void {
    // A capture stream may restart its clock while it starts up; only breaks once measuring count.
    if (counted && this.reading.sequence > 0) this.announcedBreaks++;
    this.startClean(this.written + holdOffSamples);
    this.guard.restart();
  }

  /** Adds block[0..length); returns true when `reading` holds a new reading. */
  push(block: Float32Array, length = block.length): boolean {
    const breakAt = this.config.sampleGuard ? this.guard.scan(block, length) : -1;
    if (breakAt >= 0) this.startClean(this.written + breakAt);
    const size = this.frameSize;
    const capacity = this.ring.length;
    let at = this.written % capacity;
    for (let i = 0; i < length; i++) {
      this.ring[at] = block[i];
      if (++at === capacity) at = 0;
    }
    this.subAudio?.push(block, length);
    this.written += length;

    const clean = this.written - this.cleanFrom;
    if (clean < size || this.written < this.nextReadingAt) return false;
    this.nextReadingAt = this.written + this.hopSamples;
    // As many whole frames as are clean, up to the averaging depth, ending at the newest sample.
    const frames = Math.min(this.averageDepth, Math.floor(clean / size));
    averageLockedFrames(this.ring, this.written, size, frames, this.frame);

    const reading = this.reading;
    this.analyzer.analyze(this.frame, reading, this.knownFundamentalHz);
    reading.sequence++;
    reading.discontinuities = this.discontinuities;
    reading.subAudioDbfs = this.subAudio?.levelDbfs() ?? null;
    if (reading.flags.includes('no-signal')) {
      this.settle.reset();
      reading.settleProgress = 0;
    } else {
      this.guard.setToneHz(reading.fundamental.frequencyHz);
      reading.settleProgress = this.settle.add(reading.fundamental.levelDbfs, reading.thdDb, reading.subAudioDbfs);
    }
    reading.settled = reading.settleProgress >= 1;
    return true;
  }

  private startClean(from: number): void {
    // Only ever forward: a hold-off already set is not cut short by a break found meanwhile.
    this.cleanFrom = Math.max(this.cleanFrom, from);
    this.settle.reset();
  }
}
