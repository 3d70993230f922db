// The live measurement loop shared by the analysis worker and the tests: captured blocks go in,
// settled-or-not readings come out several times a second, never computed across a capture
// discontinuity. Owns every buffer it uses; push() allocates nothing in the steady state.

import { GlitchGuard } from '../capture/glitch-guard.ts';
import { DEFAULT_ANALYZER_OPTIONS, FrameAnalyzer } from './frame-analyzer.ts';
import { createHarmonicAnalysis, FLOOR_DB, type HarmonicAnalysis, type HumComponent, type HumLevel, type HumSearch, type Reading } from './reading.ts';
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
  /**
   * The station's chain check: the loopback's own residual THD near the test frequency, dB, or null
   * when the station has none. A reading this close to it is flagged at-floor.
   */
  chainFloorThdDb: number | null;
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
  chainFloorThdDb: null,
};

/**
 * Below this THD the harmonics are under the noise in their bins, so THD scatters by decibels from
 * one reading to the next however long the unit is left: waiting for it to agree would never end
 * (a clean unit at 10 kHz, whose counted harmonics are noise). Settling then rests on the
 * fundamental alone; the value measured is unchanged. −110 dB (0.0003 %) is under the residual
 * distortion of nearly every audio interface (common practice, from memory).
 */
export const SETTLE_THD_FLOOR_DB = -110;

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
  /**
   * With nothing to measure but the unit's own output (generator off: a noise or hum step) the
   * reading settles on its noise, unweighted and A-weighted, agreeing to 0.5 dB: a frame's noise
   * estimate sums thousands of bins, so its own scatter is far below that, and what moves more is
   * the unit (a thump dying away, a plug being fitted).
   */
  private readonly quietSettle = new SettleTracker({ levelToleranceDb: 0.5, thdToleranceDb: 0.5 });
  private readonly subAudio: SubAudioMeter | null;
  /** Frames averaged in step with the stimulus (1 when it is not locked and coherent). */
  private readonly averageDepth: number;
  private readonly knownFundamentalHz: number | null;
  private readonly ring: Float32Array;
  private readonly frame: Float64Array;
  private readonly hopSamples: number;
  /** The newest single frame's analysis, for the hum (synchronous averaging cancels it, unlocked as it is). */
  private readonly single: HarmonicAnalysis;
  private readonly hum: HumLevel;
  private readonly humSearch: HumSearch;
  private written = 0;
  private cleanFrom = 0;
  private nextReadingAt = 0;
  private announcedBreaks = 0;
  /** A break has been marked since the last analysed reading: the readout must say it is settling. */
  private waiting = false;
  /** `reading` holds numbers to show (analysed here, or carried over from the meter this one replaced). */
  private hasNumbers = false;

  constructor(config: Partial<LiveMeterConfig> & Pick<LiveMeterConfig, 'sampleRateHz'>) {
    this.config = { ...DEFAULT_LIVE_METER_CONFIG, ...config };
    const { sampleRateHz, expectedFundamentalHz, readingsPerSecond, stimulusLocked } = this.config;
    this.frameSize = frameSizeFor(sampleRateHz, expectedFundamentalHz);
    this.analyzer = new FrameAnalyzer(this.frameSize, sampleRateHz, {
      harmonicCount: this.config.harmonicCount,
      mainsHz: this.config.mainsHz,
      bandLowHz: this.config.bandLowHz,
      bandHighHz: this.config.bandHighHz,
      chainFloorDbc: this.config.chainFloorThdDb,
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
      settleRemainingS: null,
      subAudioDbfs: null,
    };
    this.single = createHarmonicAnalysis();
    this.hum = { frequencyHz: 0, levelDbfs: 0, components: [] };
    this.humSearch = { mainsHz: this.config.mainsHz, orders: [], thresholdDbfs: FLOOR_DB };
  }

  /** Capture discontinuities seen so far (found in the samples or announced by the capture path). */
  get discontinuities(): number {
    return this.guard.count + this.announcedBreaks;
  }

  /**
   * Starts a new clean stretch `holdOffSamples` after the next sample. `counted` for a capture
   * discontinuity (e.g. a timestamp gap); not counted for an intended change such as a stimulus
   * step or a trimmer move, whose effect arrives at the input only after the interface's latency
   * (or, for the demo unit's trimmer, once it has turned there).
   */
  markBreak(counted: boolean, holdOffSamples = 0): void {
    // A capture stream may restart its clock while it starts up; only breaks once measuring count.
    if (counted && this.reading.sequence > 0) this.announcedBreaks++;
    this.startClean(this.written + holdOffSamples);
    this.guard.restart();
  }

  /**
   * Adds block[0..length); returns true when `reading` has changed: a new analysis (its `sequence`
   * advances), or, while the meter waits for a clean frame after a break, a settle update (the same
   * numbers, not settled, `settleRemainingS` counting down, `sequence` unchanged).
   */
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
    const reading = this.reading;
    if (this.written < this.nextReadingAt) return false;
    if (clean < size) {
      // Nothing to analyse yet; before the first reading there is nothing to show either.
      if (!this.waiting || !this.hasNumbers) return false;
      // The first clean frame is analysed as soon as it is complete, not a hop later.
      this.nextReadingAt = Math.min(this.written + this.hopSamples, this.cleanFrom + size);
      reading.settleRemainingS = this.remainingSeconds(reading);
      return true;
    }
    this.waiting = false;
    this.hasNumbers = true;
    this.nextReadingAt = this.written + this.hopSamples;
    // As many whole frames as are clean, up to the averaging depth, ending at the newest sample.
    const frames = Math.min(this.averageDepth, Math.floor(clean / size));
    if (frames > 1) {
      // Hum is not locked to the stimulus: averaging frames in step with the stimulus would cancel
      // it (four frames turning 0.27 of a 50 Hz cycle each nearly sum to zero), so it is read from
      // the newest frame alone.
      averageLockedFrames(this.ring, this.written, size, 1, this.frame);
      this.analyzer.analyze(this.frame, this.single, this.knownFundamentalHz);
      copyHum(this.single.hum, this.hum);
      // The threshold hum was judged against in that frame goes with it.
      copyHumSearch(this.single.humSearch, this.humSearch);
    }
    averageLockedFrames(this.ring, this.written, size, frames, this.frame);

    this.analyzer.analyze(this.frame, reading, this.knownFundamentalHz);
    if (frames > 1) {
      reading.hum = this.single.hum ? this.hum : null;
      reading.humSearch = this.single.humSearch ? this.humSearch : null;
    }
    reading.sequence++;
    reading.discontinuities = this.discontinuities;
    reading.subAudioDbfs = this.subAudio?.levelDbfs() ?? null;
    if (reading.flags.includes('no-signal')) {
      this.settle.reset();
      reading.settleProgress = this.quietSettle.add(reading.noiseDbfs, reading.noiseAWeightedDbfs);
    } else {
      this.quietSettle.reset();
      this.guard.setToneHz(reading.fundamental.frequencyHz);
      reading.settleProgress = this.settle.add(reading.fundamental.levelDbfs, Math.max(reading.thdDb, SETTLE_THD_FLOOR_DB));
    }
    reading.settled = reading.settleProgress >= 1;
    reading.settleRemainingS = this.remainingSeconds(reading);
    return true;
  }

  /**
   * Shows the last numbers of the meter this one replaces (its sequence starts again at 0) while
   * this one waits for its first clean frame, so the readout says "settling" at once instead of
   * keeping a settled reading of the old stimulus on screen.
   */
  carryOver(previous: Reading): void {
    if (this.hasNumbers || previous.sequence === 0) return;
    const { sequence: _s, sampleRateHz: _r, frameSize: _f, discontinuities: _d, ...analysis } = JSON.parse(JSON.stringify(previous)) as Reading;
    Object.assign(this.reading, analysis);
    this.hasNumbers = true;
    this.waiting = true;
    this.reading.settled = false;
    this.reading.settleProgress = 0;
    this.reading.settleRemainingS = this.remainingSeconds(this.reading);
  }

  /**
   * Seconds until a settled reading if the coming readings agree: the rest of the clean frame
   * (and of any hold-off), then one reading per hop for each reading still needed.
   */
  private remainingSeconds(reading: Reading): number | null {
    if (reading.settled) return 0;
    const tracker = reading.flags.includes('no-signal') ? this.quietSettle : this.settle;
    const firstFrameDone = this.cleanFrom + this.frameSize;
    const nextReading = Math.max(firstFrameDone, this.nextReadingAt, this.written);
    const needed = this.waiting ? tracker.options.readingsToAgree : tracker.readingsNeeded;
    return (nextReading - this.written + (needed - 1) * this.hopSamples) / this.config.sampleRateHz;
  }

  private startClean(from: number): void {
    // Only ever forward: a hold-off already set is not cut short by a break found meanwhile.
    this.cleanFrom = Math.max(this.cleanFrom, from);
    this.settle.reset();
    this.quietSettle.reset();
    this.waiting = true;
    const reading = this.reading;
    reading.settled = false;
    reading.settleProgress = 0;
    reading.settleRemainingS = this.remainingSeconds(reading);
  }
}

/** Copies a hum result into `to` (owned by the meter), reusing its component objects. */
function copyHum(from: HumLevel | null, to: HumLevel): void {
  if (!from) return;
  to.frequencyHz = from.frequencyHz;
  to.levelDbfs = from.levelDbfs;
  const components = to.components;
  while (components.length < from.components.length) components.push({ order: 0, frequencyHz: 0, levelDbfs: 0 } satisfies HumComponent);
  components.length = from.components.length;
  for (let i = 0; i < from.components.length; i++) {
    components[i].order = from.components[i].order;
    components[i].frequencyHz = from.components[i].frequencyHz;
    components[i].levelDbfs = from.components[i].levelDbfs;
  }
}

/** Copies a hum search into `to` (owned by the meter), reusing its array. */
function copyHumSearch(from: HumSearch | null, to: HumSearch): void {
  if (!from) return;
  to.mainsHz = from.mainsHz;
  to.thresholdDbfs = from.thresholdDbfs;
  to.orders.length = 0;
  for (const order of from.orders) to.orders.push(order);
}
