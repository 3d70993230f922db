// Frequency response and harmonic distortion from one capture of the exponential sweep
// (shared/dsp/log-sweep.ts), after A. Farina, AES preprint 5093 (2000): the capture is convolved
// with the sweep's inverse filter, which compresses the sweep into an impulse response; the
// harmonics the unit adds land as their own impulse responses ahead of the linear one, each read
// through its own window. Offline, once per measurement: it allocates freely.

import FFT from 'fft.js';
import { RESPONSE_REFERENCE_HZ, TOP_FRACTION_OF_SAMPLE_RATE } from '../calibration/chain-response.ts';
import { nextPowerOfTwo, realSpectrum } from '../dsp/fft-real.ts';
import { harmonicAdvanceS, logSweep, logSweepLayout, logSweepQuadrature, sweepTimeAtS, type LogSweepLayout, type LogSweepSpec } from '../dsp/log-sweep.ts';
import { dbFromRatio, wrapDegrees } from '../levels.ts';

/** Harmonic orders looked for. */
export const SWEEP_HARMONIC_ORDERS = [2, 3, 4, 5] as const;

/**
 * The boundary between two neighbouring impulse responses lies halfway between them. The
 * deconvolved pulse is band-limited and nearly symmetric about its peak, so at the low end of the
 * band it reaches as far before the peak as after it; a unit's own tail adds to the after side.
 * Trials with a second-order high-pass at 20 Hz swept from 10 Hz for 10 s read within 0.006 dB at
 * 20 Hz with the room split halfway, and 0.035 dB with only a quarter of it before the peak.
 */
const WINDOW_LEAD_FRACTION = 0.5;

/**
 * Each window spans at least this many cycles of the lowest frequency read through it; a shorter
 * one cuts off the unit's low-frequency tail and the deconvolved pulse's own lead-in. It is one
 * part of what "resolved" means here (see harmonicReadable).
 */
export const SWEEP_WINDOW_MIN_CYCLES = 4;

/**
 * Near either end of the sweep the fades and the abrupt start and end bend the compressed pulse
 * (Fresnel ripple), differently for the sweep and for its harmonics, so a harmonic cannot be
 * referred to the fundamental there. A frequency is clear of an end when the sweep plays it at
 * least this many times √(L/f) away from the fade: the time the sweep stays within its own
 * resolution of f. Two of them kept H2 and H3 of a memoryless polynomial within 0.2 dB over sweeps
 * of 2 to 10 s starting at 10 to 50 Hz; with none, the first points read up to 5 dB off, with one
 * up to 1.4 dB.
 */
const EDGE_PACE_MULTIPLE = 2;

/**
 * A capture holding the sweep deconvolves to a peak thousands of times the median level of the
 * impulse response; noise alone to about 7 (the largest of a million Gaussian samples is about 5σ,
 * the median of their magnitude 0.67σ).
 */
const MIN_PEAK_TO_MEDIAN = 100;

/**
 * A capture of a sweep made with other parameters (a mistyped start, end or duration) still
 * deconvolves to something like an impulse response, only smeared as a unit's could be, and reads
 * plausible but wrong (a sweep from 21 Hz read as one from 20 Hz: −1.5 dB at 20 Hz). It gives
 * itself away by not following the stimulus: over a third of an octave of the sweep, a unit's
 * output is the stimulus at one gain and phase, give or take its distortion and noise, while a
 * sweep off by a percent in frequency drifts a cycle or more away from it. This is the least
 * median fraction of the capture's energy that the stimulus explains, block by block. Trials: a
 * clean capture 0.998 and more, one clipped at 60 % of the sweep's peak 0.97, one with noise 17 dB
 * below the sweep 0.98; a 3 s sweep read as 3.01 s 0.32, one from 21 Hz read as from 20 Hz 0.003.
 */
const MIN_FOLLOWED_FRACTION = 0.5;

/**
 * The shortest sweep from startHz to endHz whose linear window holds `cycles` (SWEEP_WINDOW_MIN_CYCLES unless given) of
 * fromHz, seconds. The room before H2's response is L·ln 2 with L = T/ln(f2/f1), so T must be at
 * least cycles/fromHz/ln 2 · ln(f2/f1). Procedures check their sweeps with it.
 */
export function sweepDurationToResolve(startHz: number, endHz: number, fromHz: number = startHz, cycles: number = SWEEP_WINDOW_MIN_CYCLES): number {
  return (cycles / fromHz / Math.LN2) * Math.log(endHz / startHz);
}

/** Points at most 1/12 octave apart. */
const POINTS_PER_OCTAVE = 12;

export interface SweepResponseOptions {
  /** Reported range, Hz; by default the sweep's own start and end. */
  fromHz?: number;
  toHz?: number;
  /** Levels are relative to the level here; by default 1 kHz. */
  referenceHz?: number;
  /** The delay to remove, samples; by default the peak of the linear impulse response. */
  latencySamples?: number;
}

export interface SweepResponsePoint {
  frequencyHz: number;
  /** Relative to the level at the reference frequency, dB. */
  levelDb: number;
  /** With the latency removed, degrees in (−180, 180]. */
  phaseDeg: number;
}

export interface HarmonicPoint {
  /** The fundamental's frequency: the product read lies at order × this. */
  frequencyHz: number;
  /** The product relative to the fundamental at the output, dB. */
  levelDbc: number;
}

export interface HarmonicSeries {
  order: number;
  points: HarmonicPoint[];
}

export interface SweepResponse {
  latencySamples: number;
  referenceHz: number;
  response: SweepResponsePoint[];
  harmonics: HarmonicSeries[];
  /** Orders 2–5 left out, each with the reason. */
  unresolved: { order: number; reason: string }[];
}

export type SweepResponseOutcome = { ok: true; result: SweepResponse } | { ok: false; reason: string };

/**
 * Frequencies from `fromHz` to `toHz`, both included, spaced equally on a log axis and at most
 * 1/12 octave apart.
 */
export function responseFrequencies(fromHz: number, toHz: number): number[] {
  if (!(fromHz > 0 && toHz >= fromHz)) throw new RangeError(`the range must run upward from above 0 Hz, got ${fromHz}–${toHz} Hz`);
  const steps = Math.max(1, Math.ceil(POINTS_PER_OCTAVE * Math.log2(toHz / fromHz) - 1e-9));
  return Array.from({ length: steps + 1 }, (_, k) => (k === steps ? toHz : fromHz * (toHz / fromHz) ** (k / steps)));
}

/**
 * Farina's inverse filter: the sweep reversed in time, its amplitude falling 6 dB per octave of the
 * (now descending) frequency, i.e. proportional to the frequency it plays. The sweep's spectrum
 * falls 3 dB per octave (it spends L/f seconds per hertz), so sweep and reversed sweep together
 * fall 6 dB per octave and this envelope makes their convolution flat. The scale follows from the
 * stationary-phase spectrum |X(f)| = (A/2)·√(L/f) of a sweep of peak A: a capture of the sweep
 * itself deconvolves to a unit pulse, so a unit's impulse response comes out in its own gain.
 */
export function sweepInverseFilter(spec: LogSweepSpec, stimulus: Float32Array = logSweep(spec)): Float64Array {
  const layout = logSweepLayout(spec);
  const { sweepStart, sweepLength, fadeInLength, fullLevelLength, rateS, peakAmplitude } = layout;
  const fs = spec.sampleRateHz;
  const scale = (4 * spec.endHz) / (fs * fs * peakAmplitude * peakAmplitude * rateS);
  const inverse = new Float64Array(sweepLength);
  for (let k = 0; k < sweepLength; k++) {
    const i = sweepLength - 1 - k;
    // Sample i plays f1·e^(t/L) with t = (i − fade-in)/fs; the envelope is that over f2, e^((t − T)/L).
    inverse[k] = scale * Math.exp((i - fadeInLength - fullLevelLength) / (fs * rateS)) * stimulus[sweepStart + i];
  }
  return inverse;
}

/** The linear convolution of a capture with the inverse filter, by FFT zero-padded to a power of two. */
export function deconvolveSweep(capture: ArrayLike<number>, inverse: Float64Array): Float64Array {
  return new Deconvolver(inverse, capture.length).apply(capture);
}

/** The inverse filter's spectrum computed once for every recording of up to `longest` samples. */
class Deconvolver {
  private readonly fft: FFT;
  private readonly inverseSpectrum: Float64Array;
  private readonly inverseLength: number;

  constructor(inverse: Float64Array, longest: number) {
    this.fft = new FFT(nextPowerOfTwo(longest + inverse.length - 1));
    this.inverseSpectrum = realSpectrum(this.fft, inverse);
    this.inverseLength = inverse.length;
  }

  apply(capture: ArrayLike<number>): Float64Array {
    const { fft, inverseSpectrum } = this;
    const length = capture.length + this.inverseLength - 1;
    if (length > fft.size) throw new RangeError(`a recording of ${capture.length} samples is longer than this deconvolver was made for`);
    const product = realSpectrum(fft, capture);
    for (let k = 0; k < fft.size; k++) {
      const ar = product[2 * k];
      const ai = product[2 * k + 1];
      const br = inverseSpectrum[2 * k];
      const bi = inverseSpectrum[2 * k + 1];
      product[2 * k] = ar * br - ai * bi;
      product[2 * k + 1] = ar * bi + ai * br;
    }
    const out = new Float64Array(2 * fft.size);
    fft.inverseTransform(out, product);
    const ir = new Float64Array(length);
    for (let i = 0; i < length; i++) ir[i] = out[2 * i];
    return ir;
  }
}

/** Where each order's window lies relative to its impulse response's peak, samples. */
interface WindowPlan {
  order: number;
  /** Offset of this order's impulse response before the linear one's, samples (fractional). */
  advance: number;
  lead: number;
  tail: number;
}

function windowPlans(layout: LogSweepLayout, sampleRateHz: number): WindowPlan[] {
  const gap = (order: number) => (harmonicAdvanceS(layout, order + 1) - harmonicAdvanceS(layout, order)) * sampleRateHz;
  const plans: WindowPlan[] = [];
  for (let order = 1; order <= SWEEP_HARMONIC_ORDERS[SWEEP_HARMONIC_ORDERS.length - 1]; order++) {
    plans.push({
      order,
      advance: harmonicAdvanceS(layout, order) * sampleRateHz,
      lead: Math.floor(WINDOW_LEAD_FRACTION * gap(order)),
      // The linear response has no later neighbour; it gets the room the second harmonic gets.
      tail: Math.floor((1 - WINDOW_LEAD_FRACTION) * gap(Math.max(1, order - 1))),
    });
  }
  return plans;
}

/**
 * The impulse response around `centre` through a window flat over its middle and tapered by half a
 * Hann over the outer half of each side, so what lies beyond the room (a neighbour's response) is
 * left out without a sharp edge. `origin` is the centre's index in the segment.
 */
function windowedSegment(ir: Float64Array, centre: number, lead: number, tail: number): { samples: Float64Array; origin: number } {
  const start = Math.max(0, centre - lead);
  const end = Math.min(ir.length, centre + tail + 1);
  const samples = new Float64Array(end - start);
  const leadTaper = Math.max(1, Math.floor(lead / 2));
  const tailTaper = Math.max(1, Math.floor(tail / 2));
  for (let i = start; i < end; i++) {
    const before = centre - i;
    const after = i - centre;
    let w = 1;
    if (before > lead - leadTaper) w = 0.5 + 0.5 * Math.cos((Math.PI * (before - (lead - leadTaper))) / leadTaper);
    else if (after > tail - tailTaper) w = 0.5 + 0.5 * Math.cos((Math.PI * (after - (tail - tailTaper))) / tailTaper);
    samples[i - start] = w * ir[i];
  }
  return { samples, origin: centre - start };
}

/**
 * The DTFT of `samples` at one frequency, time measured from `origin`: exact at any frequency, which
 * an FFT's bins are not; the phasor is turned by one multiplication a sample.
 */
function dtftAt(samples: Float64Array, origin: number, cyclesPerSample: number): { re: number; im: number } {
  const w = 2 * Math.PI * cyclesPerSample;
  const stepRe = Math.cos(w);
  const stepIm = -Math.sin(w);
  let re = Math.cos(w * origin);
  let im = Math.sin(w * origin);
  let sumRe = 0;
  let sumIm = 0;
  for (let n = 0; n < samples.length; n++) {
    sumRe += samples[n] * re;
    sumIm += samples[n] * im;
    const nextRe = re * stepRe - im * stepIm;
    im = re * stepIm + im * stepRe;
    re = nextRe;
  }
  return { re: sumRe, im: sumIm };
}

function peakIndex(ir: Float64Array, from: number): number {
  let at = from;
  for (let i = from; i < ir.length; i++) if (Math.abs(ir[i]) > Math.abs(ir[at])) at = i;
  return at;
}

/** The median magnitude, from an even subsample of at most 65,536 values (enough for a ratio test). */
function medianMagnitude(ir: Float64Array): number {
  const stride = Math.max(1, Math.floor(ir.length / 65536));
  const picked = new Float64Array(Math.floor(ir.length / stride));
  for (let i = 0; i < picked.length; i++) picked[i] = Math.abs(ir[i * stride]);
  picked.sort();
  return picked[Math.floor(picked.length / 2)];
}

/**
 * The longest capture analysed, samples (87 s at 48 kHz): the capture and the inverse filter are
 * transformed together, so memory grows with both.
 */
export const SWEEP_CAPTURE_MAX_SAMPLES = 2 ** 22;

/**
 * The response and the harmonics of a unit from a capture of `logSweep(spec)` (the capture starts
 * at or before the stimulus does). Each response point is divided by the same reading of the
 * stimulus itself, deconvolved and windowed the same way, so the inverse filter's ripple at the
 * band's ends and the fades cancel and a wire reads flat from the first frequency to the last.
 * A steep slope right at the sweep's start reads less well, since the window cuts the long ringing
 * of the pulse's band edge: a second-order high-pass at 50 Hz read 0.05 dB off near 20 Hz from a
 * 10 s sweep starting at 20 Hz and 0.43 dB off from a 3 s one, while one at 5 or 10 Hz, as a
 * transformer stage rolls off, stayed within 0.02 dB. Start the sweep below the lowest frequency
 * that matters when the response falls fast there.
 */
export function analyzeSweepResponse(capture: ArrayLike<number>, spec: LogSweepSpec, options: SweepResponseOptions = {}): SweepResponseOutcome {
  const layout = logSweepLayout(spec);
  const fs = spec.sampleRateHz;
  const fromHz = options.fromHz ?? spec.startHz;
  const toHz = options.toHz ?? spec.endHz;
  const referenceHz = options.referenceHz ?? RESPONSE_REFERENCE_HZ;
  if (!(fromHz >= spec.startHz && toHz <= spec.endHz && fromHz < toHz)) {
    throw new RangeError(`the range ${fromHz}–${toHz} Hz must lie inside the sweep (${spec.startHz}–${spec.endHz} Hz) and run upward`);
  }
  if (!(referenceHz >= fromHz && referenceHz <= toHz)) throw new RangeError(`the reference frequency must lie inside ${fromHz}–${toHz} Hz, got ${referenceHz} Hz`);
  if (options.latencySamples !== undefined && !(Number.isInteger(options.latencySamples) && options.latencySamples >= 0)) {
    throw new RangeError(`the latency must be a whole number of samples, 0 or more, got ${options.latencySamples}`);
  }
  const refuse = (reason: string): SweepResponseOutcome => ({ ok: false, reason });

  const sweepEnd = layout.sweepStart + layout.sweepLength;
  if (capture.length < sweepEnd) {
    return refuse(`The capture holds ${capture.length} samples, fewer than the ${sweepEnd} the stimulus takes to finish its sweep; capture for at least as long as the stimulus plays.`);
  }
  if (capture.length > SWEEP_CAPTURE_MAX_SAMPLES) {
    return refuse(`The capture holds ${capture.length} samples, more than the ${SWEEP_CAPTURE_MAX_SAMPLES} analysed; cut it to the stimulus and a second either side.`);
  }
  for (let i = 0; i < capture.length; i++) {
    if (!Number.isFinite(capture[i])) return refuse(`The capture holds a non-finite sample at ${i}; capture again.`);
  }

  const plans = windowPlans(layout, fs);
  const linear = plans[0];
  if (linear.lead + linear.tail < (SWEEP_WINDOW_MIN_CYCLES / fromHz) * fs) {
    const neededS = sweepDurationToResolve(spec.startHz, spec.endHz, fromHz);
    return refuse(
      `A ${spec.durationS} s sweep from ${spec.startHz} Hz to ${spec.endHz} Hz cannot resolve ${fromHz} Hz: its harmonics' impulse responses lie too close to the linear one. Sweep for at least ${Math.ceil(neededS * 10) / 10} s.`,
    );
  }

  const stimulus = logSweep(spec);
  const inverse = sweepInverseFilter(spec, stimulus);
  const deconvolver = new Deconvolver(inverse, Math.max(capture.length, stimulus.length));
  const reference = deconvolver.apply(stimulus);
  const measured = deconvolver.apply(capture);
  // The stimulus deconvolves to its pulse where the inverse filter lines up with the sweep.
  const referencePeak = peakIndex(reference, 0);

  let latencySamples = options.latencySamples;
  if (latencySamples === undefined) {
    // A capture cannot lead its own stimulus, so the search starts at zero latency.
    latencySamples = peakIndex(measured, referencePeak) - referencePeak;
    const ratio = Math.abs(measured[referencePeak + latencySamples]) / medianMagnitude(measured);
    if (!(ratio >= MIN_PEAK_TO_MEDIAN)) {
      return refuse(
        `The capture does not hold the sweep clearly (impulse response peak only ${Number.isFinite(ratio) ? ratio.toFixed(1) : '0'} × its median level, at least ${MIN_PEAK_TO_MEDIAN} needed): ` +
          'check that the sweep played with these parameters, the output reached the unit and the unit the input being captured.',
      );
    }
  }
  if (capture.length < sweepEnd + latencySamples) {
    return refuse(
      `The capture ends ${((sweepEnd + latencySamples - capture.length) / fs).toFixed(3)} s before the sweep did (latency ${latencySamples} samples); capture for longer after the stimulus ends.`,
    );
  }

  const followed = followedFraction(capture, spec, layout, stimulus, latencySamples);
  if (!(followed >= MIN_FOLLOWED_FRACTION)) {
    return refuse(
      `The capture does not follow this sweep (it explains only ${Math.round(100 * Math.max(0, followed))} % of what was captured, at least ${Math.round(100 * MIN_FOLLOWED_FRACTION)} % needed): ` +
        'give the start, end, duration and rate the sweep was written with, and check that the capture is of the unit driven by it.',
    );
  }

  const measuredPeak = referencePeak + latencySamples;
  const segmentAt = (ir: Float64Array, peak: number, plan: WindowPlan) => windowedSegment(ir, Math.round(peak - plan.advance), plan.lead, plan.tail);
  const linearMeasured = segmentAt(measured, measuredPeak, linear);
  const linearReference = segmentAt(reference, referencePeak, linear);
  // The unit's transfer at f: its pulse over the stimulus's own pulse, both timed from their peaks.
  const transferAt = (frequencyHz: number) => {
    const y = dtftAt(linearMeasured.samples, linearMeasured.origin, frequencyHz / fs);
    const p = dtftAt(linearReference.samples, linearReference.origin, frequencyHz / fs);
    const pp = p.re * p.re + p.im * p.im;
    return { re: (y.re * p.re + y.im * p.im) / pp, im: (y.im * p.re - y.re * p.im) / pp, output: Math.hypot(y.re, y.im) };
  };

  const frequencies = responseFrequencies(fromHz, toHz);
  const atReference = transferAt(referenceHz);
  const referenceMagnitude = Math.hypot(atReference.re, atReference.im);
  const transfers = frequencies.map(transferAt);
  const response = frequencies.map((frequencyHz, i) => ({
    frequencyHz,
    levelDb: dbFromRatio(Math.hypot(transfers[i].re, transfers[i].im) / referenceMagnitude),
    phaseDeg: wrapDegrees((Math.atan2(transfers[i].im, transfers[i].re) * 180) / Math.PI),
  }));

  const harmonics: HarmonicSeries[] = [];
  const unresolved: { order: number; reason: string }[] = [];
  for (const plan of plans.slice(1)) {
    const { order } = plan;
    const readable = frequencies.map((_, i) => i).filter((i) => harmonicReadable(spec, layout, plan, frequencies[i]) === null);
    if (readable.length === 0) {
      unresolved.push({ order, reason: harmonicReadable(spec, layout, plan, fromHz) ?? `no H${order} between ${fromHz} and ${toHz} Hz can be read` });
      continue;
    }
    const segment = segmentAt(measured, measuredPeak, plan);
    harmonics.push({
      order,
      points: readable.map((i) => {
        // The harmonic's pulse is scaled as the fundamental's (Farina): the product at n·f over the output at f.
        const h = dtftAt(segment.samples, segment.origin, (order * frequencies[i]) / fs);
        return { frequencyHz: frequencies[i], levelDbc: dbFromRatio(Math.hypot(h.re, h.im) / transfers[i].output) };
      }),
    });
  }
  return { ok: true, result: { latencySamples, referenceHz, response, harmonics, unresolved } };
}

/**
 * Why the product of `order` made by the fundamental at f cannot be read, or null when it can.
 * "Resolved" here: the product lies inside the swept band and below the converters' anti-alias
 * region (the inverse filter holds nothing above the sweep's end, so a product there is not
 * compressed at all); its window, the room between its impulse response and its neighbours',
 * holds SWEEP_WINDOW_MIN_CYCLES of it; and the fundamental and the product are both played clear
 * of the sweep's ends (EDGE_PACE_MULTIPLE).
 */
function harmonicReadable(spec: LogSweepSpec, layout: LogSweepLayout, plan: WindowPlan, fundamentalHz: number): string | null {
  const fs = spec.sampleRateHz;
  const productHz = plan.order * fundamentalHz;
  const topHz = Math.min(spec.endHz, TOP_FRACTION_OF_SAMPLE_RATE * fs);
  if (productHz > topHz) return `H${plan.order} of ${fundamentalHz} Hz lies above ${topHz} Hz, beyond the sweep or the converters' band`;
  if (plan.lead + plan.tail < (SWEEP_WINDOW_MIN_CYCLES / productHz) * fs) {
    return `the sweep is too short to separate H${plan.order} of ${fundamentalHz} Hz from the neighbouring harmonics; sweep for longer`;
  }
  const paceS = (f: number) => EDGE_PACE_MULTIPLE * Math.sqrt(layout.rateS / f);
  // The fades lie outside the band: full level runs from t = 0 (the start frequency) to T.
  const fadeOutStartS = layout.fullLevelLength / fs;
  if (sweepTimeAtS(spec, layout, fundamentalHz) < paceS(fundamentalHz)) return `${fundamentalHz} Hz lies too near the start of the sweep; start it lower`;
  if (sweepTimeAtS(spec, layout, productHz) > fadeOutStartS - paceS(productHz)) return `H${plan.order} of ${fundamentalHz} Hz lies too near the end of the sweep; end it higher`;
  return null;
}


/**
 * The median, over the sweep's thirds of an octave, of the fraction of the capture's energy (its
 * mean taken out) that the stimulus explains at one gain and phase: a least-squares fit of the
 * capture to the sweep and its quadrature over the stretch that played that third.
 */
function followedFraction(capture: ArrayLike<number>, spec: LogSweepSpec, layout: LogSweepLayout, stimulus: Float32Array, latencySamples: number): number {
  const quadrature = logSweepQuadrature(spec);
  const fs = spec.sampleRateHz;
  const startAt = layout.sweepStart + layout.fadeInLength;
  const fractions: number[] = [];
  for (let lowHz = spec.startHz; lowHz < spec.endHz; lowHz *= 2 ** (1 / 3)) {
    const from = startAt + Math.round(sweepTimeAtS(spec, layout, lowHz) * fs);
    const to = startAt + Math.round(sweepTimeAtS(spec, layout, Math.min(spec.endHz, lowHz * 2 ** (1 / 3))) * fs);
    if (to - from < 2) continue;
    let mean = 0;
    for (let i = from; i < to; i++) mean += capture[i + latencySamples];
    mean /= to - from;
    let xx = 0;
    let qq = 0;
    let xq = 0;
    let xy = 0;
    let qy = 0;
    let yy = 0;
    for (let i = from; i < to; i++) {
      const x = stimulus[i];
      const q = quadrature[i];
      const y = capture[i + latencySamples] - mean;
      xx += x * x;
      qq += q * q;
      xq += x * q;
      xy += x * y;
      qy += q * y;
      yy += y * y;
    }
    const det = xx * qq - xq * xq;
    if (!(yy > 0 && det > 0)) {
      fractions.push(0);
      continue;
    }
    const a = (xy * qq - qy * xq) / det;
    const b = (qy * xx - xy * xq) / det;
    fractions.push((a * xy + b * qy) / yy);
  }
  fractions.sort((p, q) => p - q);
  return fractions.length === 0 ? 0 : fractions[Math.floor(fractions.length / 2)];
}
