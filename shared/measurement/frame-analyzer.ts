// Analysis of one frame: window, FFT, then every tone (fundamental, harmonics, mains hum) read
// from a few bins around it by a least-squares fit of the window's exact kernel. Tones whose lobes
// overlap (a 12 Hz fundamental's H4 at 48 Hz beside 50 Hz hum) are fitted jointly, so one never
// leaks into the other. Noise and THD+N come from the band's bin powers with the tones' lobes
// taken out. One analyzer per frame size owns every buffer; analyze() allocates nothing.

import FFT from 'fft.js';
import { isAtChainFloor } from '../calibration/station-calibration.ts';
import { aWeightingGain } from '../dsp/a-weighting.ts';
import { ComplexSolver } from '../dsp/complex-solve.ts';
import { BLACKMAN_HARRIS_7, fillWindow, WindowKernel, windowProperties, type CosineSumWindow } from '../dsp/windows.ts';
import { dbFromRatio, wrapDegrees } from '../levels.ts';
import { FLOOR_DB, type HarmonicAnalysis, type HarmonicLevel, type HumComponent, type HumSearch } from './reading.ts';

export interface AnalyzerOptions {
  /** Highest harmonic order counted (H2..HN). */
  harmonicCount: number;
  mainsHz: 50 | 60;
  /** THD+N and noise band, Hz (the top is capped at Nyquist). */
  bandLowHz: number;
  bandHighHz: number;
  /** Below this fundamental level the frame is flagged no-signal and distortion is not reported. */
  noSignalDbfs: number;
  /** Samples at or above this magnitude count as clipped. */
  clipThreshold: number;
  /** The chain's own residual THD, dB; a reading within AT_FLOOR_MARGIN_DB of it is flagged at-floor. */
  chainFloorDbc: number | null;
  window: CosineSumWindow;
}

export const DEFAULT_ANALYZER_OPTIONS: AnalyzerOptions = {
  harmonicCount: 10,
  mainsHz: 50,
  bandLowHz: 20,
  bandHighHz: 20000,
  noSignalDbfs: -80,
  clipThreshold: 0.999,
  chainFloorDbc: null,
  window: BLACKMAN_HARRIS_7,
};

const RAD_TO_DEG = 180 / Math.PI;
/** Bins each side of a tone used to fit it. */
const FIT_HALF_WIDTH = 3;
/** Hum components searched within this distance of the nominal mains frequency, Hz. */
const MAINS_SEARCH_HZ = 0.5;
/** Mains orders fitted as hum: up to the 8th, the most a reading carries across IPC (shared/ipc/contract.ts). */
const HUM_ORDERS = 8;
/** A hum component counts as present this far above the noise in its bandwidth, dB, */
const HUM_PRESENT_DB = 10;
/** and above this absolute level, near the analysis floor, so float rounding never reads as hum. */
const HUM_FLOOR_DBFS = -150;
/**
 * Two tones closer than this (bins) cannot be told apart by the joint kernel fit; from about 2.5
 * bins apart it separates them cleanly (a 12 Hz tone's H4 at 48 Hz beside 50 Hz hum, 2.7 bins at
 * 65536 samples, is tested).
 */
export const RESOLVABLE_BINS = 2.5;
/** Mains multiples a harmonic is checked against: rectifier buzz above the 10th is rarely above the noise (common practice). */
export const MAINS_MULTIPLES = 10;
const GOLDEN = (Math.sqrt(5) - 1) / 2;
// Objectives of goldenMaximum().
const SEARCH_PEAK = 0;
const SEARCH_HUM = 1;

// Component kinds.
const FUNDAMENTAL = 0;
const HARMONIC = 1;
const HUM = 2;

export class FrameAnalyzer {
  readonly frameSize: number;
  readonly sampleRateHz: number;
  readonly binHz: number;
  readonly options: AnalyzerOptions;

  /** The window divided by its sum. */
  private readonly window: Float64Array;
  private readonly enbwBins: number;
  private readonly windowed: Float64Array;
  /** FFT of the frame times the normalised window: a tone's fitted amplitude is (A/2)·e^(jφ). */
  private readonly spectrum: Float64Array;
  private readonly fft: FFT;
  private readonly kernel: WindowKernel;
  private readonly solver: ComplexSolver;
  private readonly aWeightPower: Float64Array;
  private readonly excluded: Uint8Array;
  private readonly harmonicPool: HarmonicLevel[];
  private readonly humPool: HumComponent[];
  // Components of the frame being analysed, in frequency order once sorted.
  private readonly compBins: Float64Array;
  private readonly compKind: Int8Array;
  private readonly compOrder: Int32Array;
  private readonly compRe: Float64Array;
  private readonly compIm: Float64Array;
  private readonly compIndex: Int32Array;
  private compCount = 0;
  // Bin powers of the frame being analysed (normalised spectrum), from measureBins().
  private thdnBinPower = 0;
  private noiseBinPower = 0;
  private weightedBinPower = 0;
  private noisePerBin = 0;
  private sumPower = 0;
  private sumWeighted = 0;
  private readonly humResult: { frequencyHz: number; levelDbfs: number; components: HumComponent[] } = {
    frequencyHz: 0,
    levelDbfs: FLOOR_DB,
    components: [],
  };
  private readonly humSearchResult: HumSearch;

  constructor(frameSize: number, sampleRateHz: number, options: Partial<AnalyzerOptions> = {}) {
    if (!Number.isInteger(Math.log2(frameSize)) || frameSize < 256) {
      throw new Error(`frame size must be a power of two ≥ 256, got ${frameSize}`);
    }
    if (!(sampleRateHz > 0)) throw new Error(`sample rate must be positive, got ${sampleRateHz}`);
    this.frameSize = frameSize;
    this.sampleRateHz = sampleRateHz;
    this.binHz = sampleRateHz / frameSize;
    this.options = { ...DEFAULT_ANALYZER_OPTIONS, ...options };
    const window = fillWindow(this.options.window, new Float64Array(frameSize));
    const properties = windowProperties(window);
    const windowSum = properties.coherentGain * frameSize;
    this.window = window.map((w) => w / windowSum);
    this.enbwBins = properties.enbwBins;
    this.windowed = new Float64Array(frameSize);
    this.spectrum = new Float64Array(2 * frameSize);
    this.fft = new FFT(frameSize);
    this.kernel = new WindowKernel(this.options.window, frameSize);
    this.solver = new ComplexSolver(4);
    const half = frameSize / 2;
    this.aWeightPower = Float64Array.from({ length: half + 1 }, (_, k) => aWeightingGain(Math.max(k, 1e-9) * this.binHz) ** 2);
    this.excluded = new Uint8Array(half + 1);
    this.harmonicPool = [];
    for (let order = 2; order <= this.options.harmonicCount; order++) {
      this.harmonicPool.push({ order, frequencyHz: 0, levelDbc: 0, phaseDeg: 0 });
    }
    this.humPool = Array.from({ length: HUM_ORDERS }, (_, i) => ({ order: i + 1, frequencyHz: 0, levelDbfs: 0 }));
    this.humSearchResult = { mainsHz: this.options.mainsHz, orders: [], thresholdDbfs: FLOOR_DB };
    const maxComponents = 1 + this.options.harmonicCount + HUM_ORDERS;
    this.compBins = new Float64Array(maxComponents);
    this.compKind = new Int8Array(maxComponents);
    this.compOrder = new Int32Array(maxComponents);
    this.compRe = new Float64Array(maxComponents);
    this.compIm = new Float64Array(maxComponents);
    this.compIndex = new Int32Array(maxComponents);
  }

  /**
   * Analyses frame[offset .. offset+frameSize) into `out`. The harmonic and hum entries put into
   * `out` belong to this analyzer and are overwritten by its next analyze() call. With `knownFundamentalHz` (the stimulus
   * frequency on a shared clock) the tones are read at it rather than at the strongest tone found;
   * when it also fits a whole number of cycles in the frame the analysis is coherent.
   */
  analyze(frame: ArrayLike<number>, out: HarmonicAnalysis, knownFundamentalHz: number | null = null, offset = 0): HarmonicAnalysis {
    const n = this.frameSize;
    if (frame.length - offset < n) throw new Error(`frame holds ${frame.length - offset} samples, need ${n}`);
    const window = this.window;
    const windowed = this.windowed;
    let peak = 0;
    for (let i = 0; i < n; i++) {
      const x = frame[offset + i];
      windowed[i] = x * window[i];
      const magnitude = Math.abs(x);
      peak = magnitude > peak ? magnitude : peak;
    }
    // The window is pre-divided by its sum, so the spectrum comes out normalised.
    this.fft.realTransform(this.spectrum, windowed);

    out.flags.length = 0;
    const f0 = this.locateFundamental(knownFundamentalHz, out);
    this.buildComponents(f0, true);
    this.fitComponents(-1);
    const hasSignal = dbFromRatio(2 * Math.hypot(this.compRe[0], this.compIm[0])) >= this.options.noSignalDbfs;
    if (!hasSignal) {
      // With no signal the strongest tone is noise or hum, and it has no harmonics to read:
      // multiples of it must not hide the hum orders they fall on, which would then go unread.
      this.buildComponents(f0, false);
      this.fitComponents(-1);
    }
    this.measureBins(f0);
    this.refineHum();

    const fundamentalAmplitude = 2 * Math.hypot(this.compRe[0], this.compIm[0]);
    const fundamentalPhase = Math.atan2(this.compIm[0], this.compRe[0]);
    out.fundamental.frequencyHz = f0 * this.binHz;
    out.fundamental.levelDbfs = dbFromRatio(fundamentalAmplitude);
    out.fundamental.phaseDeg = wrapDegrees(fundamentalPhase * RAD_TO_DEG);
    if (!hasSignal) out.flags.push('no-signal');

    this.writeHarmonics(out, fundamentalAmplitude, fundamentalPhase, hasSignal);
    this.writeNoise(out, f0, fundamentalAmplitude, hasSignal);
    this.writeHum(out);
    this.writeMainsCoincident(out, hasSignal);

    const periodSamples = f0 > 0 ? n / f0 : n;
    const flatTopSamples = Math.max(16, periodSamples / 32);
    if (peak >= this.options.clipThreshold || (hasSignal && longestFlatRun(frame, offset, n, flatTopSamples) >= flatTopSamples)) {
      out.flags.push('clipping');
    }
    const floor = this.options.chainFloorDbc;
    // The same rule the station's calibration states (one margin for the page, main and the sheet).
    if (hasSignal && floor !== null && isAtChainFloor(out.thdDb, floor)) out.flags.push('at-floor');
    if (out.mainsCoincidentOrders.length > 0) out.flags.push('mains-coincident');
    return out;
  }

  /**
   * Counted harmonics within the resolvable distance of nominal mains or a multiple: their level
   * may hold hum too (a 20 Hz tone's H3 on 60 Hz mains), and nothing in one frame can tell.
   */
  private writeMainsCoincident(out: HarmonicAnalysis, hasSignal: boolean): void {
    out.mainsCoincidentOrders.length = 0;
    if (!hasSignal) return;
    const mainsBin = this.options.mainsHz / this.binHz;
    for (let i = 0; i < this.compCount; i++) {
      if (this.compKind[i] !== HARMONIC) continue;
      const bin = this.compBins[i];
      const multiple = Math.min(MAINS_MULTIPLES, Math.max(1, Math.round(bin / mainsBin)));
      if (Math.abs(bin - multiple * mainsBin) < RESOLVABLE_BINS) out.mainsCoincidentOrders.push(this.compOrder[i]);
    }
  }

  /** Peak level (dBFS of a sine) per column between edgesHz[i] and edgesHz[i+1], for plotting. */
  reduceSpectrum(edgesHz: ArrayLike<number>, levelsDbfs: Float32Array): void {
    const lastBin = this.frameSize / 2;
    for (let i = 0; i + 1 < edgesHz.length && i < levelsDbfs.length; i++) {
      const from = Math.max(0, Math.floor(edgesHz[i] / this.binHz));
      const to = Math.min(lastBin, Math.max(from + 1, Math.ceil(edgesHz[i + 1] / this.binHz)));
      let peakPower = 0;
      for (let k = from; k < to; k++) {
        const power = this.spectrum[2 * k] ** 2 + this.spectrum[2 * k + 1] ** 2;
        if (power > peakPower) peakPower = power;
      }
      levelsDbfs[i] = dbFromRatio(2 * Math.sqrt(peakPower));
    }
  }

  // ---- fundamental ------------------------------------------------------------------------

  /**
   * The fundamental the components are built on, in bins. With a known frequency that is the
   * generator's (exact when coherent); `out.measuredFundamentalHz` is always the strongest tone
   * found in the frame, so a tone that is not the generator's (a wrong channel, another source) is
   * never taken for it unseen.
   */
  private locateFundamental(knownHz: number | null, out: HarmonicAnalysis): number {
    out.mode = 'windowed';
    const strongest = this.strongestBin();
    let f0: number;
    let measured: number;
    if (knownHz !== null && knownHz > 0) {
      const knownBin = knownHz / this.binHz;
      const nearest = Math.round(knownBin);
      if (Math.abs(knownBin - nearest) < 1e-6 && knownBin >= 1) {
        out.mode = 'coherent';
        f0 = nearest;
        measured = this.searchPeak(strongest);
      } else {
        f0 = this.searchPeak(nearest);
        measured = strongest === nearest ? f0 : this.searchPeak(strongest);
      }
    } else {
      f0 = this.searchPeak(strongest);
      measured = f0;
    }
    out.measuredFundamentalHz = measured * this.binHz;
    return f0;
  }

  /** The bin of the strongest tone above the DC lobe. */
  private strongestBin(): number {
    // Lowest bin searched keeps the DC lobe out of the search. A tone's main lobe is many bins
    // wide, so every second bin finds it; the neighbours then settle the peak bin.
    const firstBin = this.options.window.mainLobeBins + 2;
    const lastBin = this.frameSize / 2 - FIT_HALF_WIDTH - 2;
    const spectrum = this.spectrum;
    let peak = firstBin;
    let peakPower = -1;
    for (let k = firstBin; k <= lastBin; k += 2) {
      const re = spectrum[2 * k];
      const im = spectrum[2 * k + 1];
      const power = re * re + im * im;
      if (power > peakPower) {
        peakPower = power;
        peak = k;
      }
    }
    const strided = peak;
    for (let k = strided - 1; k <= strided + 1; k += 2) {
      if (k < firstBin || k > lastBin) continue;
      const power = spectrum[2 * k] ** 2 + spectrum[2 * k + 1] ** 2;
      if (power > peakPower) {
        peakPower = power;
        peak = k;
      }
    }
    return peak;
  }

  /**
   * The fundamental's frequency in bins: a parabola through the log magnitudes of the three bins
   * around the peak (good to a few hundredths of a bin for these windows), then a golden-section
   * search of the single-tone fit within ±0.1 bin of that.
   */
  private searchPeak(centerBin: number): number {
    const left = this.logPower(centerBin - 1);
    const middle = this.logPower(centerBin);
    const right = this.logPower(centerBin + 1);
    const curvature = left - 2 * middle + right;
    const offset = curvature < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (left - right)) / curvature)) : 0;
    const estimate = centerBin + offset;
    // 28 steps narrow ±0.1 bin to ~3e-7 bin: far below what moves a level or a phase, even at H10.
    return this.goldenMaximum(SEARCH_PEAK, estimate - 0.1, estimate + 0.1, 28, centerBin);
  }

  /**
   * Golden-section search for the maximum of one of this analyzer's objectives over [lo, hi].
   * The objective is chosen by a constant rather than passed as a closure, so nothing is allocated.
   */
  private goldenMaximum(objective: number, lo: number, hi: number, iterations: number, argument: number): number {
    let a = hi - GOLDEN * (hi - lo);
    let b = lo + GOLDEN * (hi - lo);
    let fa = this.objectiveAt(objective, a, argument);
    let fb = this.objectiveAt(objective, b, argument);
    for (let i = 0; i < iterations; i++) {
      if (fa < fb) {
        lo = a;
        a = b;
        fa = fb;
        b = lo + GOLDEN * (hi - lo);
        fb = this.objectiveAt(objective, b, argument);
      } else {
        hi = b;
        b = a;
        fb = fa;
        a = hi - GOLDEN * (hi - lo);
        fa = this.objectiveAt(objective, a, argument);
      }
    }
    return (lo + hi) / 2;
  }

  private logPower(bin: number): number {
    return Math.log(this.spectrum[2 * bin] ** 2 + this.spectrum[2 * bin + 1] ** 2 + 1e-300);
  }

  private objectiveAt(objective: number, x: number, argument: number): number {
    return objective === SEARCH_PEAK ? this.projectSingle(x, argument) : this.humEnergyAt(x, argument);
  }

  /** Energy of the least-squares fit of one tone at `bin` to the bins around `centerBin`. */
  private projectSingle(bin: number, centerBin: number): number {
    let g = 0;
    let bRe = 0;
    let bIm = 0;
    for (let k = centerBin - FIT_HALF_WIDTH; k <= centerBin + FIT_HALF_WIDTH; k++) {
      if (k < 0 || k > this.frameSize / 2) continue;
      this.kernel.evaluate(k - bin);
      const wRe = this.kernel.re;
      const wIm = this.kernel.im;
      const xRe = this.spectrum[2 * k];
      const xIm = this.spectrum[2 * k + 1];
      g += wRe * wRe + wIm * wIm;
      bRe += wRe * xRe + wIm * xIm;
      bIm += wRe * xIm - wIm * xRe;
    }
    return (bRe * bRe + bIm * bIm) / g;
  }

  // ---- components ---------------------------------------------------------------------------

  private buildComponents(f0: number, withHarmonics: boolean): void {
    const nyquistLimit = this.frameSize / 2 - FIT_HALF_WIDTH - this.options.window.mainLobeBins;
    let count = 0;
    const add = (bin: number, kind: number, order: number) => {
      this.compBins[count] = bin;
      this.compKind[count] = kind;
      this.compOrder[count] = order;
      this.compRe[count] = 0;
      this.compIm[count] = 0;
      count++;
    };
    add(f0, FUNDAMENTAL, 1);
    for (let order = 2; withHarmonics && order <= this.options.harmonicCount && order * f0 <= nyquistLimit; order++) add(order * f0, HARMONIC, order);
    const mainsBin = this.options.mainsHz / this.binHz;
    const unitTones = count;
    for (let order = 1; order <= HUM_ORDERS; order++) {
      const bin = order * mainsBin;
      if (bin > nyquistLimit || bin < FIT_HALF_WIDTH + 1) continue;
      // A hum tone within a bin of a unit tone cannot be told apart from it: leave it out.
      let hidden = false;
      for (let i = 0; i < unitTones; i++) if (Math.abs(this.compBins[i] - bin) < 1) hidden = true;
      if (!hidden) add(bin, HUM, order);
    }
    this.compCount = count;
  }

  /**
   * Fits components, jointly with any whose lobes overlap: all of them (humOrder −1), only groups
   * holding hum (0), or only the group holding the hum component of that order.
   */
  private fitComponents(humOrder: number): number {
    const count = this.compCount;
    // Sort component indices by frequency (insertion sort: at most 1 + harmonicCount + HUM_ORDERS items).
    for (let i = 0; i < count; i++) this.compIndex[i] = i;
    for (let i = 1; i < count; i++) {
      const item = this.compIndex[i];
      let j = i - 1;
      while (j >= 0 && this.compBins[this.compIndex[j]] > this.compBins[item]) {
        this.compIndex[j + 1] = this.compIndex[j];
        j--;
      }
      this.compIndex[j + 1] = item;
    }
    // Lobes overlap the fit bins of a neighbour closer than this.
    const groupGap = this.options.window.mainLobeBins + FIT_HALF_WIDTH;
    let energy = 0;
    let start = 0;
    while (start < count) {
      let end = start + 1;
      while (end < count && this.compBins[this.compIndex[end]] - this.compBins[this.compIndex[end - 1]] < groupGap) end++;
      let wanted = humOrder < 0;
      for (let i = start; i < end; i++) {
        const c = this.compIndex[i];
        if (this.compKind[c] === HUM && (humOrder === 0 || this.compOrder[c] === humOrder)) wanted = true;
      }
      if (wanted) energy += this.fitGroup(start, end);
      start = end;
    }
    return energy;
  }

  /** Joint least-squares fit of sorted components [start, end); returns the fit's energy. */
  private fitGroup(start: number, end: number): number {
    const size = end - start;
    if (size > this.solver.capacity) {
      let energy = 0;
      for (let i = start; i < end; i++) energy += this.fitGroup(i, i + 1);
      return energy;
    }
    const s = this.solver.capacity;
    const { gRe, gIm, bRe, bIm } = this.solver;
    gRe.fill(0);
    gIm.fill(0);
    bRe.fill(0);
    bIm.fill(0);
    const firstBin = Math.max(0, Math.round(this.compBins[this.compIndex[start]]) - FIT_HALF_WIDTH);
    const lastBin = Math.min(this.frameSize / 2, Math.round(this.compBins[this.compIndex[end - 1]]) + FIT_HALF_WIDTH);
    // Kernel values per component at this bin, kept in the component re/im slots' scratch below.
    for (let k = firstBin; k <= lastBin; k++) {
      const xRe = this.spectrum[2 * k];
      const xIm = this.spectrum[2 * k + 1];
      for (let i = 0; i < size; i++) {
        this.kernel.evaluate(k - this.compBins[this.compIndex[start + i]]);
        KERNEL_RE[i] = this.kernel.re;
        KERNEL_IM[i] = this.kernel.im;
      }
      for (let i = 0; i < size; i++) {
        // b_i += conj(W_i)·X ; G_il += conj(W_i)·W_l
        bRe[i] += KERNEL_RE[i] * xRe + KERNEL_IM[i] * xIm;
        bIm[i] += KERNEL_RE[i] * xIm - KERNEL_IM[i] * xRe;
        for (let l = 0; l < size; l++) {
          gRe[i * s + l] += KERNEL_RE[i] * KERNEL_RE[l] + KERNEL_IM[i] * KERNEL_IM[l];
          gIm[i * s + l] += KERNEL_RE[i] * KERNEL_IM[l] - KERNEL_IM[i] * KERNEL_RE[l];
        }
      }
    }
    for (let i = 0; i < size; i++) {
      RHS_RE[i] = bRe[i];
      RHS_IM[i] = bIm[i];
    }
    if (!this.solver.solve(size)) return 0;
    let energy = 0;
    for (let i = 0; i < size; i++) {
      const component = this.compIndex[start + i];
      this.compRe[component] = bRe[i];
      this.compIm[component] = bIm[i];
      // Fit energy = Re(b^H·c).
      energy += RHS_RE[i] * bRe[i] + RHS_IM[i] * bIm[i];
    }
    return energy;
  }

  /** Mains drifts from nominal: search its frequency where the hum fit explains most. */
  private refineHum(): void {
    let firstHum = -1;
    let strongest = -1;
    let strongestPower = 0;
    for (let i = 0; i < this.compCount; i++) {
      if (this.compKind[i] !== HUM) continue;
      if (firstHum < 0) firstHum = i;
      const power = this.compRe[i] ** 2 + this.compIm[i] ** 2;
      if (power > strongestPower) {
        strongestPower = power;
        strongest = i;
      }
    }
    if (firstHum < 0 || !this.humStandsOut()) return;
    const nominal = this.options.mainsHz / this.binHz;
    const span = MAINS_SEARCH_HZ / this.binHz;
    // Searched on the strongest hum component alone (often the 2nd, from a rectifier); the others
    // follow as multiples. 14 steps narrow ±0.5 Hz to about 1 mHz, finer than mains holds still.
    const order = this.compOrder[strongest];
    const mainsBin = this.goldenMaximum(SEARCH_HUM, nominal - span, nominal + span, 14, order);
    this.humEnergyAt(mainsBin, 0);
  }

  /** Moves the hum components to multiples of `mainsBin` and refits (see fitComponents for `humOrder`). */
  private humEnergyAt(mainsBin: number, humOrder: number): number {
    for (let i = 0; i < this.compCount; i++) if (this.compKind[i] === HUM) this.compBins[i] = this.compOrder[i] * mainsBin;
    return this.fitComponents(humOrder);
  }

  private humStandsOut(): boolean {
    const threshold = this.humThreshold();
    for (let i = 0; i < this.compCount; i++) {
      if (this.compKind[i] === HUM && 2 * (this.compRe[i] ** 2 + this.compIm[i] ** 2) > threshold) return true;
    }
    return false;
  }

  /** Mean-square power a hum component must exceed to count as present. */
  private humThreshold(): number {
    // The noise in the window's equivalent noise bandwidth, as a mean square: a bin of the
    // normalised spectrum holds noisePerBin, which is 2·noisePerBin/ENBW of mean square (as in
    // writeNoise), and ENBW bins of it hold 2·noisePerBin.
    const aboveNoise = 2 * this.noisePerBin * 10 ** (HUM_PRESENT_DB / 10);
    // A sine at L dBFS has mean square 10^(L/10)/2.
    return Math.max(aboveNoise, 0.5 * 10 ** (HUM_FLOOR_DBFS / 10));
  }

  // ---- results ------------------------------------------------------------------------------

  private writeHarmonics(out: HarmonicAnalysis, amplitude1: number, phase1: number, hasSignal: boolean): void {
    let counted = 0;
    for (let i = 0; i < this.compCount; i++) if (this.compKind[i] === HARMONIC) counted++;
    if (!hasSignal) counted = 0;
    if (out.harmonics.length !== counted) {
      out.harmonics.length = 0;
      for (let i = 0; i < counted; i++) out.harmonics.push(this.harmonicPool[i]);
    }
    out.harmonicsAboveNyquist.length = 0;
    for (let order = 2 + (hasSignal ? counted : this.harmonicPool.length); order <= this.options.harmonicCount; order++) {
      out.harmonicsAboveNyquist.push(order);
    }
    let harmonicPower = 0;
    for (let i = 0; i < this.compCount; i++) {
      if (this.compKind[i] !== HARMONIC || !hasSignal) continue;
      const h = out.harmonics[this.compOrder[i] - 2];
      const amplitude = 2 * Math.hypot(this.compRe[i], this.compIm[i]);
      harmonicPower += amplitude * amplitude;
      h.frequencyHz = this.compBins[i] * this.binHz;
      h.levelDbc = dbFromRatio(amplitude / amplitude1);
      h.phaseDeg = wrapDegrees((Math.atan2(this.compIm[i], this.compRe[i]) - h.order * phase1) * RAD_TO_DEG);
    }
    const thd = hasSignal ? Math.sqrt(harmonicPower) / amplitude1 : 0;
    out.thdPercent = 100 * thd;
    out.thdDb = dbFromRatio(thd);
  }

  /**
   * Power in the band without the fundamental (THD+N), without any tone (noise, also A-weighted),
   * and the mean bin power away from every tone over the whole spectrum (the local noise that hum
   * must stand above). Sums every bin in tight loops, then takes the tones' lobes back out.
   */
  private measureBins(f0: number): void {
    const half = this.frameSize / 2;
    const guard = this.options.window.mainLobeBins + 1;
    const spectrum = this.spectrum;
    const aWeight = this.aWeightPower;
    const firstBandBin = Math.max(guard, Math.ceil(this.options.bandLowHz / this.binHz));
    const lastBandBin = Math.min(half - 1, Math.floor(Math.min(this.options.bandHighHz, this.sampleRateHz / 2) / this.binHz));

    // The fundamental's lobe is skipped while summing, not subtracted after: it can be 160 dB
    // above the noise, and subtracting it would leave only rounding error.
    const fundamentalCenter = Math.round(f0);
    const fundamentalFrom = fundamentalCenter - guard;
    const fundamentalTo = fundamentalCenter + guard;
    this.sumBins(firstBandBin, Math.min(lastBandBin, fundamentalFrom - 1));
    let bandPower = this.sumPower;
    let bandWeighted = this.sumWeighted;
    this.sumBins(Math.max(firstBandBin, fundamentalTo + 1), lastBandBin);
    bandPower += this.sumPower;
    bandWeighted += this.sumWeighted;
    let allPower = bandPower;
    this.sumBins(guard, Math.min(firstBandBin - 1, fundamentalFrom - 1));
    allPower += this.sumPower;
    this.sumBins(Math.max(guard, fundamentalTo + 1), firstBandBin - 1);
    allPower += this.sumPower;
    this.sumBins(Math.max(lastBandBin + 1, guard), Math.min(half - 1, fundamentalFrom - 1));
    allPower += this.sumPower;
    this.sumBins(Math.max(lastBandBin + 1, fundamentalTo + 1, guard), half - 1);
    allPower += this.sumPower;

    // Take the lobes back out, each bin once (the mask stops overlapping lobes counting twice).
    const excluded = this.excluded;
    let fundamentalBandPower = 0;
    let fundamentalBandBins = 0;
    let toneBandPower = 0;
    let toneBandWeighted = 0;
    let toneBandBins = 0;
    let tonePower = 0;
    let toneBins = 0;
    for (let i = 0; i < this.compCount; i++) {
      const center = i === 0 ? fundamentalCenter : Math.round(this.compBins[i]);
      for (let k = Math.max(guard, center - guard); k <= Math.min(half - 1, center + guard); k++) {
        if (excluded[k]) continue;
        excluded[k] = 1;
        const inFundamentalLobe = k >= fundamentalFrom && k <= fundamentalTo;
        // Bins of the fundamental's lobe were never summed: count them, subtract nothing.
        const power = inFundamentalLobe ? 0 : spectrum[2 * k] * spectrum[2 * k] + spectrum[2 * k + 1] * spectrum[2 * k + 1];
        tonePower += power;
        toneBins++;
        if (k < firstBandBin || k > lastBandBin) continue;
        toneBandPower += power;
        toneBandWeighted += power * aWeight[k];
        toneBandBins++;
        if (inFundamentalLobe) {
          fundamentalBandPower += power;
          fundamentalBandBins++;
        }
      }
    }
    for (let i = 0; i < this.compCount; i++) {
      const center = i === 0 ? fundamentalCenter : Math.round(this.compBins[i]);
      for (let k = Math.max(0, center - guard); k <= Math.min(half, center + guard); k++) excluded[k] = 0;
    }

    // Bins hidden under the tones' lobes are credited with the average of the rest of the band.
    const bandBins = Math.max(0, lastBandBin - firstBandBin + 1);
    const thdnBins = bandBins - fundamentalBandBins;
    const noiseBins = bandBins - toneBandBins;
    this.thdnBinPower = thdnBins > 0 ? ((bandPower - fundamentalBandPower) * bandBins) / thdnBins : 0;
    this.noiseBinPower = noiseBins > 0 ? ((bandPower - toneBandPower) * bandBins) / noiseBins : 0;
    this.weightedBinPower = noiseBins > 0 ? ((bandWeighted - toneBandWeighted) * bandBins) / noiseBins : 0;
    const quietBins = half - guard - toneBins;
    this.noisePerBin = quietBins > 0 ? Math.max(0, allPower - tonePower) / quietBins : 0;
  }

  /** Sums bin power (and A-weighted power) over bins from..to into sumPower / sumWeighted. */
  private sumBins(from: number, to: number): void {
    const spectrum = this.spectrum;
    const aWeight = this.aWeightPower;
    let power = 0;
    let weighted = 0;
    for (let k = from; k <= to; k++) {
      const p = spectrum[2 * k] * spectrum[2 * k] + spectrum[2 * k + 1] * spectrum[2 * k + 1];
      power += p;
      weighted += p * aWeight[k];
    }
    this.sumPower = power;
    this.sumWeighted = weighted;
  }

  private writeNoise(out: HarmonicAnalysis, f0: number, amplitude1: number, hasSignal: boolean): void {
    // Written in place: analyze() allocates nothing.
    out.bandHz.lowHz = this.options.bandLowHz;
    out.bandHz.highHz = Math.min(this.options.bandHighHz, this.sampleRateHz / 2);
    // Bin power → mean-square power: 2|X/Σw|² / ENBW. 0 dBFS is a full-scale sine, mean square 1/2.
    const toMeanSquare = 2 / this.enbwBins;
    const floor = 10 ** (FLOOR_DB / 10);
    out.noiseDbfs = 10 * Math.log10(Math.max((this.noiseBinPower * toMeanSquare) / 0.5, floor));
    out.noiseAWeightedDbfs = 10 * Math.log10(Math.max((this.weightedBinPower * toMeanSquare) / 0.5, floor));
    if (!hasSignal || f0 <= 0) {
      out.thdnPercent = 0;
      out.thdnDb = FLOOR_DB;
      out.sinadDb = 0;
      out.enob = 0;
      return;
    }
    const ratio = Math.sqrt((this.thdnBinPower * toMeanSquare) / ((amplitude1 * amplitude1) / 2));
    out.thdnPercent = 100 * ratio;
    out.thdnDb = dbFromRatio(ratio);
    out.sinadDb = -out.thdnDb;
    out.enob = (out.sinadDb - 1.76) / 6.02;
  }

  private writeHum(out: HarmonicAnalysis): void {
    const present = this.humThreshold();
    const search = this.humSearchResult;
    search.orders.length = 0;
    // A sine of mean square P is at 10·log10(2P) dBFS.
    search.thresholdDbfs = 10 * Math.log10(2 * present);
    out.humSearch = search;
    let standsOut = false;
    let components = 0;
    let mainsBin = 0;
    for (let i = 0; i < this.compCount; i++) {
      if (this.compKind[i] !== HUM) continue;
      search.orders.push(this.compOrder[i]);
      const power = 2 * (this.compRe[i] ** 2 + this.compIm[i] ** 2);
      if (power > present) standsOut = true;
      const c = this.humPool[components++];
      c.order = this.compOrder[i];
      c.frequencyHz = this.compBins[i] * this.binHz;
      c.levelDbfs = dbFromRatio(2 * Math.sqrt(power / 2));
      mainsBin = this.compBins[i] / this.compOrder[i];
    }
    if (!standsOut) {
      out.hum = null;
      return;
    }
    const hum = this.humResult;
    hum.components.length = 0;
    hum.frequencyHz = mainsBin * this.binHz;
    hum.levelDbfs = FLOOR_DB;
    for (let i = 0; i < components; i++) {
      hum.components.push(this.humPool[i]);
      if (this.humPool[i].order === 1) hum.levelDbfs = this.humPool[i].levelDbfs;
    }
    out.hum = hum;
  }
}

/**
 * Longest run of one repeated value away from zero (|x| ≥ 0.1), or 0 if none reaches `shortest`:
 * the flat tops a stage clipping before the converter leaves. Looks only at every
 * ⌊shortest/2⌋-th sample, which lands twice inside any run that long, then measures the run.
 */
function longestFlatRun(frame: ArrayLike<number>, offset: number, length: number, shortest: number): number {
  const stride = Math.max(1, Math.floor(shortest / 2));
  let longest = 0;
  for (let i = 0; i + stride < length; i += stride) {
    const x = frame[offset + i];
    if (x !== frame[offset + i + stride] || Math.abs(x) < 0.1) continue;
    let from = i;
    while (from > 0 && frame[offset + from - 1] === x) from--;
    let to = i + stride;
    while (to + 1 < length && frame[offset + to + 1] === x) to++;
    longest = Math.max(longest, to - from + 1);
    i = to; // continue past this run
  }
  return longest;
}

// Per-bin kernel values of a group and the saved right-hand side (module scratch; groups are ≤ 4).
const KERNEL_RE = new Float64Array(4);
const KERNEL_IM = new Float64Array(4);
const RHS_RE = new Float64Array(4);
const RHS_IM = new Float64Array(4);
