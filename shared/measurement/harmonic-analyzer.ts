// Harmonic analysis of one frame: windowed FFT to find the fundamental, then the exact
// windowed DTFT at the refined fundamental and at each multiple, so levels carry no
// scalloping loss whatever the frequency. One analyzer per frame size owns every buffer;
// analyze() allocates nothing.

import FFT from 'fft.js';
import { BLACKMAN_HARRIS_4, fillWindow } from '../dsp/windows.ts';
import { dbFromRatio, wrapDegrees } from '../levels.ts';
import type { HarmonicAnalysis, HarmonicLevel } from './reading.ts';

export interface HarmonicAnalyzerOptions {
  /** Highest harmonic order counted (H2..HN). */
  harmonicCount: number;
  /** Below this fundamental level the frame is flagged no-signal and harmonics are not reported. */
  noSignalDbfs: number;
  /** Samples at or above this magnitude count as clipped. */
  clipThreshold: number;
  /** Lowest fundamental searched for, Hz (keeps DC and its window leakage out of the search). */
  minFundamentalHz: number;
}

export const DEFAULT_ANALYZER_OPTIONS: HarmonicAnalyzerOptions = {
  harmonicCount: 10,
  noSignalDbfs: -80,
  clipThreshold: 0.999,
  minFundamentalHz: 5,
};

const RAD_TO_DEG = 180 / Math.PI;
// Parabolic refinement steps in bins: the 4-term Blackman-Harris main lobe is close to a
// parabola within ±0.05 bin of its peak, so three shrinking steps reach ~1e-6 bin.
const REFINE_STEPS_BINS = [0.05, 0.005, 0.0005];

export class HarmonicAnalyzer {
  readonly frameSize: number;
  readonly sampleRateHz: number;
  readonly binHz: number;
  readonly options: HarmonicAnalyzerOptions;

  private readonly window: Float64Array;
  private readonly windowSum: number;
  private readonly windowed: Float64Array;
  private readonly spectrum: Float64Array;
  private readonly fft: FFT;
  private readonly harmonicPool: HarmonicLevel[];
  // DTFT result slots, written by dtftAt() so no tuple is allocated per call.
  private re = 0;
  private im = 0;

  constructor(frameSize: number, sampleRateHz: number, options: Partial<HarmonicAnalyzerOptions> = {}) {
    if (!Number.isInteger(Math.log2(frameSize)) || frameSize < 256) {
      throw new Error(`frame size must be a power of two ≥ 256, got ${frameSize}`);
    }
    if (!(sampleRateHz > 0)) throw new Error(`sample rate must be positive, got ${sampleRateHz}`);
    this.frameSize = frameSize;
    this.sampleRateHz = sampleRateHz;
    this.binHz = sampleRateHz / frameSize;
    this.options = { ...DEFAULT_ANALYZER_OPTIONS, ...options };
    this.window = fillWindow(BLACKMAN_HARRIS_4, new Float64Array(frameSize));
    this.windowSum = this.window.reduce((sum, w) => sum + w, 0);
    this.windowed = new Float64Array(frameSize);
    this.spectrum = new Float64Array(2 * frameSize);
    this.fft = new FFT(frameSize);
    this.harmonicPool = [];
    for (let order = 2; order <= this.options.harmonicCount; order++) {
      this.harmonicPool.push({ order, frequencyHz: 0, levelDbc: 0, phaseDeg: 0 });
    }
  }

  /** Analyses frame[offset .. offset+frameSize) into `out`. */
  analyze(frame: ArrayLike<number>, out: HarmonicAnalysis, offset = 0): HarmonicAnalysis {
    const n = this.frameSize;
    if (frame.length - offset < n) throw new Error(`frame holds ${frame.length - offset} samples, need ${n}`);
    const { clipThreshold } = this.options;
    let clipped = 0;
    for (let i = 0; i < n; i++) {
      const x = frame[offset + i];
      if (x >= clipThreshold || x <= -clipThreshold) clipped++;
      this.windowed[i] = x * this.window[i];
    }
    this.fft.realTransform(this.spectrum, this.windowed);

    out.flags.length = 0;
    if (clipped > 0) out.flags.push('clipping');

    const peakBin = this.findPeakBin();
    const fundamentalBin = this.refinePeak(peakBin);
    this.dtftAt(fundamentalBin);
    const amplitude1 = this.amplitudeFromDtft();
    const phase1 = Math.atan2(this.im, this.re);
    out.fundamental.frequencyHz = fundamentalBin * this.binHz;
    out.fundamental.levelDbfs = dbFromRatio(amplitude1);
    out.fundamental.phaseDeg = wrapDegrees(phase1 * RAD_TO_DEG);

    if (out.fundamental.levelDbfs < this.options.noSignalDbfs) {
      out.flags.push('no-signal');
      out.harmonics.length = 0;
      out.thdPercent = 0;
      out.thdDb = dbFromRatio(0);
      return out;
    }

    // Orders whose frequency reaches Nyquist (less the window's main lobe) are left out.
    const highestBin = n / 2 - 4;
    let counted = 0;
    while (counted < this.harmonicPool.length && (counted + 2) * fundamentalBin <= highestBin) counted++;
    if (out.harmonics.length !== counted) {
      out.harmonics.length = 0;
      for (let i = 0; i < counted; i++) out.harmonics.push(this.harmonicPool[i]);
    }

    let harmonicPower = 0;
    for (let i = 0; i < counted; i++) {
      const h = out.harmonics[i];
      const bin = h.order * fundamentalBin;
      this.dtftAt(bin);
      const amplitude = this.amplitudeFromDtft();
      harmonicPower += amplitude * amplitude;
      h.frequencyHz = bin * this.binHz;
      h.levelDbc = dbFromRatio(amplitude / amplitude1);
      h.phaseDeg = wrapDegrees((Math.atan2(this.im, this.re) - h.order * phase1) * RAD_TO_DEG);
    }
    const thd = Math.sqrt(harmonicPower) / amplitude1;
    out.thdPercent = 100 * thd;
    out.thdDb = dbFromRatio(thd);
    return out;
  }

  /**
   * Fills `levelsDbfs[i]` with the highest FFT bin level (dBFS of a sine) between
   * `edgesHz[i]` and `edgesHz[i+1]` of the last analysed frame: a per-column peak
   * reduction for plotting, so the plot never draws more points than it has columns.
   */
  reduceSpectrum(edgesHz: ArrayLike<number>, levelsDbfs: Float32Array): void {
    const scale = 2 / this.windowSum;
    const lastBin = this.frameSize / 2;
    for (let i = 0; i + 1 < edgesHz.length && i < levelsDbfs.length; i++) {
      const from = Math.max(0, Math.floor(edgesHz[i] / this.binHz));
      const to = Math.min(lastBin, Math.max(from + 1, Math.ceil(edgesHz[i + 1] / this.binHz)));
      let peakPower = 0;
      for (let k = from; k < to; k++) {
        const re = this.spectrum[2 * k];
        const im = this.spectrum[2 * k + 1];
        const power = re * re + im * im;
        if (power > peakPower) peakPower = power;
      }
      levelsDbfs[i] = dbFromRatio(Math.sqrt(peakPower) * scale);
    }
  }

  private findPeakBin(): number {
    const firstBin = Math.max(4, Math.ceil(this.options.minFundamentalHz / this.binHz));
    let best = firstBin;
    let bestPower = -1;
    for (let k = firstBin; k < this.frameSize / 2 - 1; k++) {
      const re = this.spectrum[2 * k];
      const im = this.spectrum[2 * k + 1];
      const power = re * re + im * im;
      if (power > bestPower) {
        bestPower = power;
        best = k;
      }
    }
    return best;
  }

  /**
   * Refines the peak location (in bins): a parabola through the log magnitudes of the three FFT
   * bins around the peak (good to ~0.01 bin for this window), then parabolas through |X| from the
   * exact DTFT at shrinking spacings around the estimate.
   */
  private refinePeak(peakBin: number): number {
    const logMagnitude = (k: number) => 0.5 * Math.log(this.spectrum[2 * k] ** 2 + this.spectrum[2 * k + 1] ** 2 + 1e-300);
    const a = logMagnitude(peakBin - 1);
    const b = logMagnitude(peakBin);
    const c = logMagnitude(peakBin + 1);
    const binCurvature = a - 2 * b + c;
    let center = peakBin + (binCurvature < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (a - c)) / binCurvature)) : 0);
    for (const step of REFINE_STEPS_BINS) {
      const left = this.magnitudeAt(center - step);
      const middle = this.magnitudeAt(center);
      const right = this.magnitudeAt(center + step);
      const curvature = left - 2 * middle + right;
      if (curvature >= 0) break; // not a maximum (no tone): keep the estimate
      center += Math.max(-0.5, Math.min(0.5, ((0.5 * (left - right)) / curvature) * step));
    }
    return center;
  }

  private magnitudeAt(bin: number): number {
    this.dtftAt(bin);
    return Math.hypot(this.re, this.im);
  }

  private amplitudeFromDtft(): number {
    return (2 * Math.hypot(this.re, this.im)) / this.windowSum;
  }

  /** Windowed DTFT at a fractional bin, by complex rotation (error grows ~N·ε, ~1e-11 at 2^17). */
  private dtftAt(bin: number): void {
    const omega = (2 * Math.PI * bin) / this.frameSize;
    const stepRe = Math.cos(omega);
    const stepIm = -Math.sin(omega);
    let zRe = 1;
    let zIm = 0;
    let sumRe = 0;
    let sumIm = 0;
    const x = this.windowed;
    for (let i = 0; i < this.frameSize; i++) {
      const v = x[i];
      sumRe += v * zRe;
      sumIm += v * zIm;
      const nextRe = zRe * stepRe - zIm * stepIm;
      zIm = zRe * stepIm + zIm * stepRe;
      zRe = nextRe;
    }
    this.re = sumRe;
    this.im = sumIm;
  }
}
