// The live measurement loop shared by the analysis worker and the tests: captured blocks go in,
// settled-or-not readings come out several times a second, never computed across a capture
// discontinuity. Owns every buffer it uses; push() allocates nothing in the steady state.

import { GlitchGuard } from '../capture/glitch-guard.ts';
import { HarmonicAnalyzer } from './harmonic-analyzer.ts';
import { createHarmonicAnalysis, type Reading } from './reading.ts';
import { SettleTracker } from './settle.ts';

export interface LiveMeterConfig {
  sampleRateHz: number;
  /** The stimulus frequency when known; sets the frame length (long enough for low tones). */
  expectedFundamentalHz: number | null;
  harmonicCount: number;
  readingsPerSecond: number;
}

export const DEFAULT_LIVE_METER_CONFIG: Omit<LiveMeterConfig, 'sampleRateHz'> = {
  expectedFundamentalHz: null,
  harmonicCount: 10,
  readingsPerSecond: 6,
};

// Cycles of the fundamental per frame: enough for the 4-term Blackman-Harris main lobe
// (±4 bins) to keep the fundamental clear of H2 and of DC.
const CYCLES_PER_FRAME = 12;
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
  readonly analyzer: HarmonicAnalyzer;
  readonly reading: Reading;
  private readonly guard: GlitchGuard;
  private readonly settle = new SettleTracker();
  private readonly ring: Float32Array;
  private readonly frame: Float64Array;
  private readonly hopSamples: number;
  private written = 0;
  private cleanFrom = 0;
  private nextReadingAt = 0;
  private announcedBreaks = 0;

  constructor(config: Partial<LiveMeterConfig> & Pick<LiveMeterConfig, 'sampleRateHz'>) {
    this.config = { ...DEFAULT_LIVE_METER_CONFIG, ...config };
    const { sampleRateHz, expectedFundamentalHz, harmonicCount, readingsPerSecond } = this.config;
    this.frameSize = frameSizeFor(sampleRateHz, expectedFundamentalHz);
    this.analyzer = new HarmonicAnalyzer(this.frameSize, sampleRateHz, { harmonicCount });
    this.guard = new GlitchGuard(sampleRateHz);
    if (expectedFundamentalHz) this.guard.setToneHz(expectedFundamentalHz);
    this.ring = new Float32Array(this.frameSize);
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
    };
  }

  /** Capture discontinuities seen so far (found in the samples or announced by the capture path). */
  get discontinuities(): number {
    return this.guard.count + this.announcedBreaks;
  }

  /**
   * Starts a new clean stretch at the next sample. `counted` for a capture discontinuity
   * (e.g. a timestamp gap); not counted for an intended change such as a stimulus step.
   */
  markBreak(counted: boolean): void {
    // A capture stream may restart its clock while it starts up; only breaks once measuring count.
    if (counted && this.reading.sequence > 0) this.announcedBreaks++;
    this.cleanFrom = this.written;
    this.guard.restart();
    this.settle.reset();
  }

  /** Adds block[0..length); returns true when `reading` holds a new reading. */
  push(block: Float32Array, length = block.length): boolean {
    const breakAt = this.guard.scan(block, length);
    if (breakAt >= 0) {
      this.cleanFrom = this.written + breakAt;
      this.settle.reset();
    }
    const size = this.frameSize;
    let at = this.written % size;
    for (let i = 0; i < length; i++) {
      this.ring[at] = block[i];
      if (++at === size) at = 0;
    }
    this.written += length;

    if (this.written - this.cleanFrom < size || this.written < this.nextReadingAt) return false;
    this.nextReadingAt = this.written + this.hopSamples;

    // Unroll the ring so the oldest sample comes first.
    const start = this.written % size;
    for (let i = 0; i < size; i++) this.frame[i] = this.ring[(start + i) % size];

    const reading = this.reading;
    this.analyzer.analyze(this.frame, reading);
    reading.sequence++;
    reading.discontinuities = this.discontinuities;
    if (reading.flags.includes('no-signal')) {
      this.settle.reset();
      reading.settleProgress = 0;
    } else {
      this.guard.setToneHz(reading.fundamental.frequencyHz);
      reading.settleProgress = this.settle.add(reading.fundamental.levelDbfs, reading.thdDb);
    }
    reading.settled = reading.settleProgress >= 1;
    return true;
  }
}
