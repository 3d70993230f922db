// Analysis of a whole recording (the offline `analyze` command): the fundamental's frequency from
// an IEEE 1241 four-parameter fit over the record, then the same frame analysis as the live path
// over evenly spaced frames that together cover every sample, combined power-wise.
//
// The record is read through a SampleSource, a piece at a time, so a recording of any length is
// analysed in bounded memory: one frame (at most MAX_FRAME samples), one scan block, and the
// frequency fit's samples. The fit runs on the first MAX_FIT_SAMPLES samples only (about 87 s at
// 48 kHz), which already pins the frequency far below any frame's resolution; it is the same
// subset the in-memory analysis always used, so the numbers do not depend on how the record is read.

import { fitSine4 } from '../dsp/sine-fit.ts';
import { dbFromRatio, wrapDegrees } from '../levels.ts';
import { DEFAULT_ANALYZER_OPTIONS, FrameAnalyzer, type AnalyzerOptions } from './frame-analyzer.ts';
import { createHarmonicAnalysis, FLOOR_DB, type HarmonicAnalysis, type ReadingFlag } from './reading.ts';

export interface RecordAnalysisOptions extends Pick<AnalyzerOptions, 'harmonicCount' | 'mainsHz' | 'bandLowHz' | 'bandHighHz'> {
  /** The stimulus frequency when known; otherwise it is found. */
  fundamentalHz: number | null;
}

export interface RecordAnalysis extends HarmonicAnalysis {
  sampleRateHz: number;
  frameSize: number;
  frames: number;
}

/** Samples read on demand: `read` fills `into` with the samples from `start` on. */
export interface SampleSource {
  readonly length: number;
  read(start: number, into: Float64Array): void;
}

export function memorySource(samples: Float64Array): SampleSource {
  return { length: samples.length, read: (start, into) => into.set(samples.subarray(start, start + into.length)) };
}

export const MIN_RECORD_SAMPLES = 4096;
// Samples checked for NaN and infinity per read.
const SCAN_BLOCK = 1 << 16;
const MAX_FRAME = 262144;
// The frequency fit needs no more than this many samples to be far better than any frame's.
const MAX_FIT_SAMPLES = 1 << 22;

export function analyzeRecord(samples: Float64Array, sampleRateHz: number, options: Partial<RecordAnalysisOptions> = {}): RecordAnalysis {
  return analyzeRecordSource(memorySource(samples), sampleRateHz, options);
}

export function analyzeRecordSource(source: SampleSource, sampleRateHz: number, options: Partial<RecordAnalysisOptions> = {}): RecordAnalysis {
  const length = source.length;
  if (length < MIN_RECORD_SAMPLES) {
    throw new RangeError(`the recording holds ${length} samples; at least ${MIN_RECORD_SAMPLES} are needed`);
  }
  // A NaN or infinity (a float WAV from a crashed or overflowing program) would poison every sum,
  // so the whole record is scanned before anything is analysed.
  const block = new Float64Array(Math.min(SCAN_BLOCK, length));
  for (let start = 0; start < length; start += block.length) {
    const piece = start + block.length <= length ? block : block.subarray(0, length - start);
    source.read(start, piece);
    const bad = piece.findIndex((x) => !Number.isFinite(x));
    if (bad >= 0) {
      const at = start + bad;
      throw new RangeError(`the recording holds a non-finite sample (${piece[bad]}) at sample ${at} (${(at / sampleRateHz).toFixed(3)} s); nothing analysed`);
    }
  }
  const analyzerOptions = {
    harmonicCount: options.harmonicCount ?? DEFAULT_ANALYZER_OPTIONS.harmonicCount,
    mainsHz: options.mainsHz ?? DEFAULT_ANALYZER_OPTIONS.mainsHz,
    bandLowHz: options.bandLowHz ?? DEFAULT_ANALYZER_OPTIONS.bandLowHz,
    bandHighHz: options.bandHighHz ?? DEFAULT_ANALYZER_OPTIONS.bandHighHz,
  };
  const frameSize = Math.min(MAX_FRAME, 2 ** Math.floor(Math.log2(length)));
  const analyzer = new FrameAnalyzer(frameSize, sampleRateHz, analyzerOptions);
  const frames = Math.ceil(length / frameSize);
  const stride = frames > 1 ? (length - frameSize) / (frames - 1) : 0;
  const frameAt = (i: number) => Math.round(i * stride);
  const frame = new Float64Array(frameSize);

  // Find the fundamental on the first frame, then pin it down over the first MAX_FIT_SAMPLES.
  const scratch = createHarmonicAnalysis();
  let fundamentalHz = options.fundamentalHz ?? null;
  if (fundamentalHz === null) {
    source.read(0, frame);
    analyzer.analyze(frame, scratch, null, 0);
    const hasSignal = !scratch.flags.includes('no-signal');
    if (hasSignal) {
      const fitSamples = new Float64Array(Math.min(length, MAX_FIT_SAMPLES));
      source.read(0, fitSamples);
      fundamentalHz = fitSine4(fitSamples, sampleRateHz, scratch.fundamental.frequencyHz).frequencyHz;
    }
  }

  const sum = new Accumulator(analyzerOptions.harmonicCount);
  for (let i = 0; i < frames; i++) {
    source.read(frameAt(i), frame);
    analyzer.analyze(frame, scratch, fundamentalHz, 0);
    sum.add(scratch);
  }
  const combined = sum.result();
  if (fundamentalHz !== null) combined.fundamental.frequencyHz = fundamentalHz;
  return { ...combined, sampleRateHz, frameSize, frames };
}

/** Combines frame analyses: levels as mean power, phases as the circular mean, flags as the union. */
class Accumulator {
  private count = 0;
  private fundamentalPower = 0;
  private firstPhaseDeg = 0;
  private frequencyHz = 0;
  private measuredFrequencyHz = 0;
  private mode: HarmonicAnalysis['mode'] = 'windowed';
  private readonly harmonicPower: Float64Array;
  private readonly harmonicCos: Float64Array;
  private readonly harmonicSin: Float64Array;
  private readonly harmonicFrequency: Float64Array;
  private harmonicOrders: number[] = [];
  private aboveNyquist: number[] = [];
  private thdnPower = 0;
  private noisePower = 0;
  private weightedNoisePower = 0;
  private humFrames = 0;
  private humFrequency = 0;
  private readonly humPower = new Map<number, { power: number; frequencyHz: number }>();
  /** The hum threshold's mean power and the orders every frame fitted, while every frame reported its search. */
  private humSearch: { mainsHz: 50 | 60; orders: number[]; thresholdPower: number } | null = null;
  private humSearchFrames = 0;
  private readonly flags = new Set<ReadingFlag>();
  private readonly mainsCoincident = new Set<number>();

  constructor(harmonicCount: number) {
    this.harmonicPower = new Float64Array(harmonicCount + 1);
    this.harmonicCos = new Float64Array(harmonicCount + 1);
    this.harmonicSin = new Float64Array(harmonicCount + 1);
    this.harmonicFrequency = new Float64Array(harmonicCount + 1);
  }

  /** Every frame is summed over the same band (one analyzer). */
  private bandHz = { lowHz: 0, highHz: 0 };

  add(frame: HarmonicAnalysis): void {
    this.bandHz = { ...frame.bandHz };
    if (this.count === 0) {
      this.firstPhaseDeg = frame.fundamental.phaseDeg;
      this.harmonicOrders = frame.harmonics.map((h) => h.order);
      this.aboveNyquist = [...frame.harmonicsAboveNyquist];
      this.mode = frame.mode;
    }
    this.count++;
    const amplitude = 10 ** (frame.fundamental.levelDbfs / 20);
    this.fundamentalPower += amplitude * amplitude;
    this.frequencyHz += frame.fundamental.frequencyHz;
    this.measuredFrequencyHz += frame.measuredFundamentalHz;
    for (const h of frame.harmonics) {
      const ratio = 10 ** (h.levelDbc / 20);
      this.harmonicPower[h.order] += ratio * ratio;
      const radians = (h.phaseDeg * Math.PI) / 180;
      this.harmonicCos[h.order] += ratio * Math.cos(radians);
      this.harmonicSin[h.order] += ratio * Math.sin(radians);
      this.harmonicFrequency[h.order] += h.frequencyHz;
    }
    this.thdnPower += (frame.thdnPercent / 100) ** 2;
    this.noisePower += 10 ** (frame.noiseDbfs / 10);
    this.weightedNoisePower += 10 ** (frame.noiseAWeightedDbfs / 10);
    if (frame.hum) {
      this.humFrames++;
      this.humFrequency += frame.hum.frequencyHz;
      for (const c of frame.hum.components) {
        const entry = this.humPower.get(c.order) ?? { power: 0, frequencyHz: 0 };
        entry.power += 10 ** (c.levelDbfs / 10);
        entry.frequencyHz += c.frequencyHz;
        this.humPower.set(c.order, entry);
      }
    }
    if (frame.humSearch) {
      const { mainsHz, orders, thresholdDbfs } = frame.humSearch;
      if (!this.humSearch) this.humSearch = { mainsHz, orders: [...orders], thresholdPower: 0 };
      this.humSearch.orders = this.humSearch.orders.filter((order) => orders.includes(order));
      this.humSearch.thresholdPower += 10 ** (thresholdDbfs / 10);
      this.humSearchFrames++;
    }
    for (const flag of frame.flags) this.flags.add(flag);
    for (const order of frame.mainsCoincidentOrders) this.mainsCoincident.add(order);
  }

  result(): HarmonicAnalysis {
    const n = this.count;
    const harmonics = this.harmonicOrders.map((order) => ({
      order,
      frequencyHz: this.harmonicFrequency[order] / n,
      levelDbc: dbFromRatio(Math.sqrt(this.harmonicPower[order] / n)),
      phaseDeg: wrapDegrees((Math.atan2(this.harmonicSin[order], this.harmonicCos[order]) * 180) / Math.PI),
    }));
    const thd = Math.sqrt(this.harmonicOrders.reduce((total, order) => total + this.harmonicPower[order] / n, 0));
    const noSignal = this.flags.has('no-signal');
    const thdn = Math.sqrt(this.thdnPower / n);
    // Hum counts when it stood above the noise in most frames.
    const humPresent = this.humFrames * 2 > n;
    const humComponents = [...this.humPower.entries()]
      .sort(([a], [b]) => a - b)
      .map(([order, entry]) => ({
        order,
        frequencyHz: entry.frequencyHz / this.humFrames,
        levelDbfs: 10 * Math.log10(Math.max(entry.power / this.humFrames, 10 ** (FLOOR_DB / 10))),
      }));
    return {
      mode: this.mode,
      fundamental: {
        frequencyHz: this.frequencyHz / n,
        levelDbfs: dbFromRatio(Math.sqrt(this.fundamentalPower / n)),
        phaseDeg: this.firstPhaseDeg,
      },
      measuredFundamentalHz: this.measuredFrequencyHz / n,
      harmonics: noSignal ? [] : harmonics,
      harmonicsAboveNyquist: this.aboveNyquist,
      thdPercent: noSignal ? 0 : 100 * thd,
      thdDb: noSignal ? FLOOR_DB : dbFromRatio(thd),
      thdnPercent: noSignal ? 0 : 100 * thdn,
      thdnDb: noSignal ? FLOOR_DB : dbFromRatio(thdn),
      sinadDb: noSignal ? 0 : -dbFromRatio(thdn),
      enob: noSignal ? 0 : (-dbFromRatio(thdn) - 1.76) / 6.02,
      noiseDbfs: 10 * Math.log10(Math.max(this.noisePower / n, 10 ** (FLOOR_DB / 10))),
      noiseAWeightedDbfs: 10 * Math.log10(Math.max(this.weightedNoisePower / n, 10 ** (FLOOR_DB / 10))),
      hum: humPresent
        ? {
            frequencyHz: this.humFrequency / this.humFrames,
            levelDbfs: humComponents.find((c) => c.order === 1)?.levelDbfs ?? FLOOR_DB,
            components: humComponents,
          }
        : null,
      // A bound for hum that does not stand out holds only when it stood out in no frame: each
      // frame's order then lay under its own threshold, so their mean power under the mean threshold.
      humSearch:
        this.humFrames === 0 && this.humSearch && this.humSearchFrames === n
          ? { mainsHz: this.humSearch.mainsHz, orders: this.humSearch.orders, thresholdDbfs: 10 * Math.log10(this.humSearch.thresholdPower / n) }
          : null,
      bandHz: { ...this.bandHz },
      mainsCoincidentOrders: [...this.mainsCoincident].sort((a, b) => a - b),
      flags: [...this.flags],
    };
  }
}
