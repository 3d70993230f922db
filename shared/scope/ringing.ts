// Ringing after the edges of a square-wave response, read from an oscilloscope record: an audio
// interface cannot see ringing at 100 kHz and above, so the record comes from a scope.
//
// Methods and where they come from:
// - The two settled levels: the median of the samples on each side of the midrange between the 1st
//   and 99th percentiles, a robust stand-in for the modes of the record's histogram by which
//   IEEE Std 181 (transitions, pulses and related waveforms) finds a waveform's state levels (from
//   memory). Edges are found by thresholds at 25 % and 75 % between them (hysteresis, so noise and
//   ringing around one level never count as an edge), and each edge is timed at its 50 % crossing,
//   the reference instant of IEEE 181.
// - Overshoot: the first peak beyond the final level as a percentage of the step (Ogata, Modern
//   Control Engineering, "maximum overshoot"; IEEE 181's overshoot aberration likewise).
// - Ringing frequency from the zero crossings of the deviation from the final level. For the
//   second-order step response y = 1 − e^{−ζωn t}(cos ωd t + ζ/√(1−ζ²) sin ωd t) (Ogata) they are
//   spaced exactly half a damped period π/ωd apart, and so are its extrema.
// - Damping ratio from the logarithmic decrement δ = ln(x_k/x_{k+1}) between successive peaks of one
//   sign, a period apart, ζ = δ/√(4π² + δ²) (Ogata; Thomson, Theory of Vibration with Applications).
//   Peaks of alternate sign come every half period, each e^{−δ/2} of the one before, so a
//   least-squares line through ln|x| of every peak above the noise gives δ from two peaks or more.
// - Settling time: until the deviation enters and then stays within ±2 % of the step, the usual
//   band (Ogata gives 2 % or 5 %; 2 % is the common practice for a step response), timed from the
//   edge's 50 % instant as IEEE 181 times its transition settling duration (from memory): the
//   record shows the unit's output, not the generator's edge.
// - Damping ratio from the overshoot alone, when only the first peak stands above the noise:
//   M = exp(−ζπ/√(1−ζ²)) solved for ζ, ζ = −ln M/√(π² + ln² M) (Ogata). Kept as a lower bound only:
//   the noise may hide later lobes, and a larger overshoot than the true one gives a smaller ζ. With
//   no overshoot above the noise at all, the overshoot is below the level that would have counted,
//   so ζ is at least the value that overshoot would give.
// - Rise time between 10 % and 90 % of the step (IEEE 181's reference levels, from memory), which
//   says how fast an edge the unit was driven with: see shared/procedures/ringing.ts.

import { median } from '../dsp/median.ts';

export interface RingingOptions {
  /** Half-width of the settling band as a percentage of the step. */
  settlingBandPercent: number;
}

export const DEFAULT_RINGING_OPTIONS: Readonly<RingingOptions> = { settlingBandPercent: 2 };

export type EdgeFlag = 'no-ringing' | 'not-settled' | 'noisy' | 'undersampled' | 'not-decaying';
export const RINGING_FLAGS = ['no-ringing', 'not-settled', 'noisy', 'undersampled', 'not-decaying', 'too-few-edges', 'irregular-edges', 'clipped-record', 'some-edges-without-ringing'] as const;
export type RingingFlag = (typeof RINGING_FLAGS)[number];

/** What each flag means and what to do about it, one sentence each, for every place that shows one. */
export const RINGING_FLAG_TEXT: Readonly<Record<RingingFlag, string>> = {
  'no-ringing': 'no oscillation around the final level stands above the noise (an overshoot and a swing back past the final level are both needed)',
  'not-settled': 'the response was still outside the settling band in the last quarter before the next edge; lower the square wave’s frequency',
  noisy: 'the noise is too large to judge the settling band; reduce the noise (bandwidth limit, averaging, a probe with a short ground) or capture at a more sensitive range',
  undersampled: 'fewer than 8 samples per ringing period; capture at a higher sample rate',
  'not-decaying': 'the ringing does not die away: the unit may be oscillating',
  'too-few-edges': 'fewer than two complete edges, or none of one polarity; capture at least a whole period of the square wave',
  'irregular-edges': 'the edges do not come a square wave’s period apart (ringing or noise crossing between the levels, or a wave that is not square), so the figures cannot be trusted',
  'clipped-record': 'the trace piles up at its highest or lowest value, as a trace beyond the scope’s screen does; set the vertical range so the whole response is on screen',
  'some-edges-without-ringing': 'some edges show no ringing; the ringing figures are medians over the edges that ring',
};

export interface RingingPeak {
  /** Seconds from the record's first sample. */
  timeS: number;
  /** From the final level, percent of the step; positive beyond it (overshoot), negative short of it. */
  deviationPercent: number;
}

export interface EdgeRinging {
  polarity: 'rising' | 'falling';
  /** The 50 % instant, seconds from the record's first sample. */
  timeS: number;
  /** Final level minus the level before the edge. */
  stepV: number;
  finalLevelV: number;
  overshootPercent: number;
  ringFrequencyHz: number | null;
  logDecrement: number | null;
  dampingRatio: number | null;
  /** Peaks above the noise, alternating in sign, the first being the overshoot. */
  peaks: RingingPeak[];
  /** Standard deviation of the white noise on the settled stretch before the next edge. */
  noiseV: number;
  /** The fitted envelope ±amplitudePercent·e^{−decayPerS·(t − timeS)}, for the plot; null without ringing. */
  envelope: { amplitudePercent: number; decayPerS: number } | null;
  /** From the 50 % instant until the deviation stays within the band; null when not settled or too noisy. */
  settlingTimeS: number | null;
  /**
   * Without ringing (fewer than two peaks): ζ is at least this, from the one overshoot above the
   * noise, or from the overshoot that would just have stood above it when there is none. Null when
   * the edge rings (dampingRatio has the value).
   */
  dampingRatioAtLeast: number | null;
  /** Between the edge's 10 % and 90 % points, seconds (to the edge's end when it never reaches 90 %); null when the record begins after its 10 % point. */
  riseTimeS: number | null;
  flags: EdgeFlag[];
}

export interface RingingAnalysis {
  edges: EdgeRinging[];
  lowLevelV: number;
  highLevelV: number;
  /** Median of the edges' step sizes. */
  stepV: number;
  /** Median over the edges of the white noise on the settled stretches (second differences). */
  noiseV: number;
  /** The record's smallest value step when it is quantised (a scope's ADC), else 0. */
  quantumV: number;
  sampleIntervalS: number;
  settlingBandPercent: number;
  /** Medians over the edges that ring; null when none does. */
  ringFrequencyHz: number | null;
  logDecrement: number | null;
  dampingRatio: number | null;
  /** When no edge rings: the smallest of the edges' lower bounds on ζ (the surest); else null. */
  dampingRatioAtLeast: number | null;
  /** The longest 10–90 % rise time over the edges (the slowest edge bounds what the record can show); null when no edge's could be measured. */
  riseTimeS: number | null;
  /** Median over all edges. */
  overshootPercent: number;
  /** Median over the edges whose settling could be judged, an unsettled edge counting as longest; null when that is unsettled. */
  settlingTimeS: number | null;
  flags: RingingFlag[];
}

/**
 * ζ of the second-order system whose step response overshoots by `overshoot` (a fraction of the
 * step, between 0 and 1): M = exp(−ζπ/√(1−ζ²)) solved for ζ (Ogata).
 */
export function dampingRatioOfOvershoot(overshoot: number): number {
  const lnM = Math.log(overshoot);
  return -lnM / Math.sqrt(Math.PI ** 2 + lnM ** 2);
}

/** A record the analysis cannot be run on, said in words a technician can act on. */
export class RingingError extends Error {
  override name = 'RingingError';
}

interface Transition {
  /** +1 rising, −1 falling. */
  sign: 1 | -1;
  /** Last sample on the far side of the threshold it leaves. */
  depart: number;
  /** First sample beyond the threshold it reaches. */
  arrive: number;
}

interface Lobe {
  /** Zero crossings that bound it, in fractional samples, and the deviation's slope there (steps a sample). */
  start: number;
  end: number;
  startSlope: number;
  endSlope: number;
  /** |deviation| at its extremum, in steps, and where that lies. */
  peak: number;
  peakAt: number;
}

const MIN_SAMPLES = 32;
// Fewer samples than this per ringing period and its peaks and crossings are guesses.
const MIN_SAMPLES_PER_PERIOD = 8;

/**
 * The standard deviation of white noise on x[from..end), from second differences: they cancel a
 * level, a slope and nearly all of a well-sampled ringing, and leave 6σ² of white noise, whose mean
 * absolute value is √(2/π) of its standard deviation. A mean rather than a median: a scope's codes
 * make the median of small differences jump between 0 and one code.
 */
function whiteNoise(x: ArrayLike<number>, from: number, end: number): number {
  let sum = 0;
  for (let i = from + 1; i < end - 1; i++) sum += Math.abs(x[i + 1] - 2 * x[i] + x[i - 1]);
  const count = end - from - 2;
  return count > 0 ? sum / count / Math.sqrt(6 * (2 / Math.PI)) : 0;
}

function findTransitions(x: ArrayLike<number>, low: number, high: number): Transition[] {
  const lowThreshold = low + 0.25 * (high - low);
  const highThreshold = low + 0.75 * (high - low);
  const transitions: Transition[] = [];
  let state: 0 | 1 | -1 = 0;
  let lastLow = -1;
  let lastHigh = -1;
  for (let i = 0; i < x.length; i++) {
    if (x[i] >= highThreshold) {
      if (state === -1) transitions.push({ sign: 1, depart: lastLow, arrive: i });
      state = 1;
      lastHigh = i;
    } else if (x[i] <= lowThreshold) {
      if (state === 1) transitions.push({ sign: -1, depart: lastHigh, arrive: i });
      state = -1;
      lastLow = i;
    }
  }
  return transitions;
}

/**
 * A trace beyond the scope's screen is held at the ADC's extreme code: the record piles up at its
 * highest or lowest value, where a trace on screen thins out into the noise. `settledNoise` is the
 * noise on the settled stretches, which is nil only in a computed or averaged record.
 */
function looksClipped(sorted: Float64Array, lowLevel: number, highLevel: number, settledNoise: number, quantumV: number): boolean {
  const n = sorted.length;
  const step = highLevel - lowLevel;
  const atLevel = (value: number, level: number) => Math.abs(value - level) <= Math.max(quantumV / 2, 1e-6 * step);
  const topAtLevel = atLevel(sorted[n - 1], highLevel);
  const bottomAtLevel = atLevel(sorted[0], lowLevel);
  // Both levels pinned to one code each: a scope's ADC always shows some noise unless the trace is
  // cut off on both sides. Only a computed record, with no codes, settles that cleanly.
  if (topAtLevel && bottomAtLevel) return quantumV > 0;
  const runEnd = (start: number, direction: 1 | -1) => {
    let k = start;
    while (k >= 0 && k < n && sorted[k] === sorted[start]) k += direction;
    return k;
  };
  const clippedAt = (start: number, direction: 1 | -1, levelIsExtreme: boolean) => {
    // One settled level is the extreme: noise would spread its samples beyond it unless cut off.
    if (levelIsExtreme) return settledNoise > Math.max(quantumV / 10, 1e-6 * step);
    const next = runEnd(start, direction);
    if (next < 0 || next >= n) return false;
    const count = Math.abs(next - start);
    const nextCount = Math.abs(runEnd(next, direction) - next);
    // A smooth peak caught in one code holds it about 2.4 times as long as the code inside it (a
    // parabola's width goes as the square root of the depth); a clipped one far longer.
    return count >= 8 && count >= 3 * nextCount;
  };
  return clippedAt(n - 1, -1, topAtLevel) || clippedAt(0, 1, bottomAtLevel);
}

/** Edges two apart (one period of the square wave) spaced unevenly: some are not the wave's edges. */
function irregular(transitions: readonly Transition[]): boolean {
  const periods: number[] = [];
  for (let k = 2; k < transitions.length; k++) periods.push(transitions[k].arrive - transitions[k - 2].arrive);
  if (periods.length === 0) return false;
  const typical = median(periods);
  // 10 % is far beyond a generator's jitter; two samples allow for noise moving a crossing.
  return periods.some((period) => Math.abs(period - typical) > 0.1 * typical + 2);
}

/** The typical step between the record's distinct values when it is quantised, else 0. */
function quantum(sorted: Float64Array): number {
  const gaps: number[] = [];
  for (let i = 1; i < sorted.length; i++) if (sorted[i] !== sorted[i - 1]) gaps.push(sorted[i] - sorted[i - 1]);
  if (gaps.length + 1 > sorted.length / 4) return 0;
  // A computed record repeats values too (where it has settled) but its steps lie on no grid.
  const typical = median(gaps);
  const onGrid = gaps.filter((gap) => Math.abs(gap / typical - Math.round(gap / typical)) <= 0.05).length;
  return onGrid >= 0.9 * gaps.length ? typical : 0;
}

/**
 * Least-squares polynomial c[0] + c[1]·u + … + c[degree]·u^degree through the points, by the
 * normal equations and Gaussian elimination; null when the points do not determine it.
 */
function fitPolynomial(u: readonly number[], y: readonly number[], degree: number): number[] | null {
  const size = degree + 1;
  if (u.length < size) return null;
  const scale = Math.max(1, ...u.map(Math.abs));
  const m = Array.from({ length: size }, () => new Array<number>(size + 1).fill(0));
  for (let k = 0; k < u.length; k++) {
    const powers = [1];
    for (let j = 1; j < size; j++) powers.push(powers[j - 1] * (u[k] / scale));
    for (let r = 0; r < size; r++) {
      for (let c = 0; c < size; c++) m[r][c] += powers[r] * powers[c];
      m[r][size] += powers[r] * y[k];
    }
  }
  for (let col = 0; col < size; col++) {
    let pivot = col;
    for (let r = col + 1; r < size; r++) if (Math.abs(m[r][col]) > Math.abs(m[pivot][col])) pivot = r;
    if (Math.abs(m[pivot][col]) < 1e-12 * u.length) return null;
    [m[col], m[pivot]] = [m[pivot], m[col]];
    for (let r = 0; r < size; r++) {
      if (r === col) continue;
      const factor = m[r][col] / m[col][col];
      for (let c = col; c <= size; c++) m[r][c] -= factor * m[col][c];
    }
  }
  return m.map((row, j) => row[size] / row[j] / scale ** j);
}

/**
 * The highest point of a lobe, from the raw deviation over a quarter period around its highest
 * smoothed sample: free of the average's small loss and of most of the noise. Its height from a
 * parabola: over ±45° one reads a cosine's peak 0.14 % low (the u⁴/24 term's least-squares share,
 * b⁴/280), the same for every lobe, so the decrement is untouched; a narrower span would halve the
 * points and double the noise on a small second peak. Its time from a cubic: a damped lobe leans
 * (it rises faster than it falls), which puts a parabola's vertex late by most of a sample and the
 * envelope drawn through the peaks too high; the cubic's extra term is too noisy for the height.
 * Null when the parabola has no maximum inside the span.
 */
function lobePeak(u: readonly number[], y: readonly number[], reach: number): { value: number; at: number } | null {
  const p = fitPolynomial(u, y, 2);
  if (!p || p[2] >= 0 || Math.abs(p[1] / (2 * p[2])) > reach) return null;
  const value = p[0] - (p[1] * p[1]) / (4 * p[2]);
  const c = fitPolynomial(u, y, 3);
  // Where the cubic's slope c1 + 2c2·u + 3c3·u² is zero and its curvature 2c2 + 6c3·u negative.
  const disc = c ? 4 * c[2] * c[2] - 12 * c[3] * c[1] : -1;
  const roots = c && disc >= 0 && c[3] !== 0 ? [(-2 * c[2] + Math.sqrt(disc)) / (6 * c[3]), (-2 * c[2] - Math.sqrt(disc)) / (6 * c[3])] : [];
  const at = roots.find((r) => Math.abs(r) <= reach && 2 * c![2] + 6 * c![3] * r < 0) ?? -p[1] / (2 * p[2]);
  return { value, at };
}

/** Weighted least-squares line y = a + b·x. */
function fitLine(x: readonly number[], y: readonly number[], w: readonly number[]): { a: number; b: number } {
  let sw = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
  for (let k = 0; k < x.length; k++) {
    sw += w[k];
    sx += w[k] * x[k];
    sy += w[k] * y[k];
    sxx += w[k] * x[k] * x[k];
    sxy += w[k] * x[k] * y[k];
  }
  const b = (sw * sxy - sx * sy) / (sw * sxx - sx * sx);
  return { a: (sy - b * sx) / sw, b };
}

/**
 * One edge: `x` is the whole record, the edge's samples run from `t.depart` to `end` (exclusive),
 * `previousLevel` is the level it leaves. Null when the segment does not hold a step of its polarity.
 */
function analyzeEdge(x: ArrayLike<number>, dt: number, t: Transition, end: number, previousLevel: number, quantumV: number, band: number): EdgeRinging | null {
  const tailStart = t.arrive + Math.floor(0.75 * (end - t.arrive));
  let sum = 0;
  for (let i = tailStart; i < end; i++) sum += x[i];
  const finalLevel = sum / (end - tailStart);
  const step = finalLevel - previousLevel;
  if (Math.sign(step) !== t.sign) return null;
  const size = Math.abs(step);
  const s = t.sign;

  // The 50 % instant, interpolated between the samples either side.
  const mid = previousLevel + step / 2;
  let i50 = t.depart;
  while (i50 < t.arrive && s * (x[i50] - mid) < 0) i50++;
  const t50 = i50 > t.depart ? i50 - 1 + (mid - x[i50 - 1]) / (x[i50] - x[i50 - 1]) : i50;

  const from = t.depart;
  const count = end - from;
  // The deviation from the final level in steps, positive beyond it.
  const d = new Float64Array(count);
  for (let k = 0; k < count; k++) d[k] = (s * (x[from + k] - finalLevel)) / size;
  const prefix = new Float64Array(count + 1);
  for (let k = 0; k < count; k++) prefix[k + 1] = prefix[k] + d[k];
  const q = quantumV / size;
  const tailNoise = whiteNoise(x, tailStart, end) / size;

  // A centred moving average takes the noise down without moving crossings or peaks: on a damped
  // sinusoid it is one complex gain, the same for every lobe, so ratios and spacings are kept.
  const measure = (width: number) => {
    const half = Math.floor(width / 2);
    const ds = new Float64Array(count);
    for (let k = 0; k < count; k++) {
      const lo = Math.max(0, k - half);
      const hi = Math.min(count, k + half + 1);
      ds[k] = (prefix[hi] - prefix[lo]) / (hi - lo);
    }
    // White noise after the average, from the raw tail. Not the tail's spread: ringing that has
    // not died by then would raise the bar until the ringing itself no longer counted.
    const sigma = tailNoise / Math.sqrt(2 * half + 1);
    // Zero crossings count once the deviation has gone `hysteresis` beyond zero; a lobe counts as
    // ringing when its peak stands five standard deviations (or two quanta) clear of the noise.
    const hysteresis = Math.max(2 * sigma, q / 2, 1e-4);
    const threshold = Math.max(5 * sigma, 2 * q, 1e-3);
    const crossing = (k: number) => k - 1 + ds[k - 1] / (ds[k - 1] - ds[k]);
    const slope = (k: number) => Math.abs(ds[k] - ds[k - 1]);
    const lobes: Lobe[] = [];
    let k = Math.ceil(t50) - from;
    while (k < count && ds[k] < 0) k++;
    if (k < count && k > 0) {
      let start = crossing(k);
      let startSlope = slope(k);
      let sign = 1;
      for (;;) {
        let j = k;
        let reached = false;
        for (; j < count; j++) {
          const v = sign * ds[j];
          if (v >= hysteresis) {
            reached = true;
            break;
          }
          if (v <= -hysteresis) break;
        }
        if (!reached) break;
        let e = j;
        while (e < count && sign * ds[e] >= 0) e++;
        if (e >= count) break;
        const stop = crossing(e);
        let at = j;
        for (let m = k; m < e; m++) if (sign * ds[m] > sign * ds[at]) at = m;
        const reach = Math.max(2, Math.round((stop - start) / 4));
        const u: number[] = [];
        const y: number[] = [];
        for (let m = Math.max(k, at - reach); m <= Math.min(e - 1, at + reach); m++) {
          u.push(m - at);
          y.push(sign * d[m]);
        }
        const fitted = lobePeak(u, y, reach);
        const peak = fitted ? fitted.value : sign * ds[at];
        if (peak < threshold) break;
        lobes.push({ start: start + from, end: stop + from, startSlope, endSlope: slope(e), peak, peakAt: at + (fitted ? fitted.at : 0) + from });
        sign = -sign;
        start = stop;
        startSlope = slope(e);
        k = e;
      }
    }
    return { ds, sigma, threshold, lobes };
  };

  // First pass with a window a quarter of the 25–75 % transition, which for a second-order response
  // is well under a sixteenth of its ringing period; then a sixteenth of the period found, which
  // loses 0.6 % of a sinusoid's amplitude (sin x / x at π/16).
  let pass = measure(Math.max(1, Math.floor((t.arrive - t.depart) / 4)));
  if (pass.lobes.length > 0) {
    const periodSamples = (2 * (pass.lobes.at(-1)!.end - pass.lobes[0].start)) / pass.lobes.length;
    pass = measure(Math.max(1, Math.floor(periodSamples / 16)));
  }
  const { ds, sigma, threshold, lobes } = pass;
  const flags: EdgeFlag[] = [];

  let overshoot = 0;
  if (lobes.length > 0) overshoot = lobes[0].peak;
  else for (let k = Math.ceil(t50) - from; k < count; k++) overshoot = Math.max(overshoot, ds[k]);

  let ringFrequencyHz: number | null = null;
  let logDecrement: number | null = null;
  let dampingRatio: number | null = null;
  let envelope: EdgeRinging['envelope'] = null;
  if (lobes.length >= 2) {
    // Weights slope²: noise moves a crossing by its size over the slope there, so the late,
    // shallow crossings count for less.
    const crossings = [lobes[0].start, ...lobes.map((lobe) => lobe.end)];
    const halfPeriod = fitLine(
      crossings.map((_, j) => j),
      crossings,
      [lobes[0].startSlope, ...lobes.map((lobe) => lobe.endSlope)].map((v) => v * v),
    ).b;
    ringFrequencyHz = 1 / (2 * halfPeriod * dt);
    // Successive peaks by their number, not their time, as the decrement is defined: each is half
    // a period after the one before. Weights peak²: each ln|x| carries the noise over the peak.
    const weights = lobes.map((lobe) => lobe.peak ** 2);
    const decay = fitLine(
      lobes.map((_, k) => k),
      lobes.map((lobe) => Math.log(lobe.peak)),
      weights,
    );
    logDecrement = -2 * decay.b;
    dampingRatio = logDecrement / Math.sqrt(4 * Math.PI ** 2 + logDecrement ** 2);
    // The envelope through the peaks, carried back to the 50 % instant.
    const decayPerSample = -decay.b / halfPeriod;
    let lnAmplitude = 0;
    lobes.forEach((lobe, k) => (lnAmplitude += weights[k] * (Math.log(lobe.peak) + decayPerSample * (lobe.peakAt - t50))));
    lnAmplitude /= weights.reduce((sum, w) => sum + w, 0);
    envelope = { amplitudePercent: 100 * Math.exp(lnAmplitude), decayPerS: decayPerSample / dt };
    if (2 * halfPeriod < MIN_SAMPLES_PER_PERIOD) flags.push('undersampled');
    if (logDecrement <= 0) flags.push('not-decaying');
  } else {
    flags.push('no-ringing');
  }
  // One lobe: its overshoot. None: the overshoot is under what would have counted as a lobe (the
  // threshold, or the largest deviation seen when that is higher); any larger one would have stood
  // out. Either with two standard deviations more for the noise on the peak, so that noise reading
  // a peak low does not raise the bound.
  const overshootAtMost = lobes.length === 1 ? lobes[0].peak : Math.max(threshold, overshoot);
  const dampingRatioAtLeast = lobes.length < 2 ? dampingRatioOfOvershoot(Math.min(1, overshootAtMost + 2 * sigma)) : null;

  // 10 % and 90 % of the step, by linear interpolation, found outwards from the 50 % point.
  const level = (fraction: number) => previousLevel + fraction * step;
  let j10 = Math.min(i50, x.length - 1);
  while (j10 > 0 && s * (x[j10] - level(0.1)) > 0) j10--;
  let j90 = i50;
  while (j90 < end && s * (x[j90] - level(0.9)) < 0) j90++;
  const crossingAt = (i: number, value: number) => (x[i + 1] === x[i] ? i : i + (value - x[i]) / (x[i + 1] - x[i]));
  // An edge the record begins in has no 10 % point; one that never reaches 90 % is at least as slow
  // as the span it was given.
  const t10 = s * (x[j10] - level(0.1)) <= 0 ? crossingAt(j10, level(0.1)) : null;
  const riseTimeS = t10 === null ? null : ((j90 < end ? crossingAt(j90 - 1, level(0.9)) : end) - t10) * dt;

  // Settling: the last smoothed sample outside the band, and where |deviation| crosses into it.
  let settlingTimeS: number | null = null;
  if (5 * sigma >= band) {
    flags.push('noisy');
  } else {
    let last = count - 1;
    while (last >= 0 && Math.abs(ds[last]) <= band) last--;
    if (last < 0 || last + from >= tailStart || last + 1 >= count) {
      flags.push('not-settled');
    } else {
      const a = Math.abs(ds[last]);
      const b = Math.abs(ds[last + 1]);
      settlingTimeS = Math.max(0, (last + from + (a - band) / (a - b) - t50) * dt);
    }
  }

  return {
    polarity: s > 0 ? 'rising' : 'falling',
    timeS: t50 * dt,
    stepV: step,
    finalLevelV: finalLevel,
    overshootPercent: 100 * overshoot,
    ringFrequencyHz,
    logDecrement,
    dampingRatio,
    peaks: lobes.map((lobe, k) => ({ timeS: lobe.peakAt * dt, deviationPercent: (k % 2 === 0 ? 100 : -100) * lobe.peak })),
    envelope,
    settlingTimeS,
    dampingRatioAtLeast,
    riseTimeS,
    noiseV: tailNoise * size,
    flags,
  };
}

/**
 * The ringing after every complete edge of a square-wave response sampled every `sampleIntervalS`
 * seconds, and the medians over the edges. Throws RingingError when the record shows no square wave.
 */
export function analyzeRinging(samples: ArrayLike<number>, sampleIntervalS: number, options: Partial<RingingOptions> = {}): RingingAnalysis {
  const { settlingBandPercent } = { ...DEFAULT_RINGING_OPTIONS, ...options };
  const n = samples.length;
  if (!(sampleIntervalS > 0) || !Number.isFinite(sampleIntervalS)) throw new RingingError(`the sample interval must be a positive number of seconds, got ${sampleIntervalS}`);
  if (!(settlingBandPercent > 0 && settlingBandPercent < 50)) throw new RingingError(`the settling band must lie between 0 and 50 % of the step, got ${settlingBandPercent}`);
  if (n < MIN_SAMPLES) throw new RingingError(`the record holds ${n} samples; a square-wave response needs hundreds at least`);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(samples[i])) throw new RingingError(`sample ${i + 1} is not a finite number (${samples[i]})`);
  }
  const sorted = Float64Array.from(samples).sort();
  if (sorted[0] === sorted[n - 1]) throw new RingingError(`every sample reads ${sorted[0]}: the record shows no square wave; check the probe and the channel`);
  const midrange = (sorted[Math.floor(0.01 * (n - 1))] + sorted[Math.ceil(0.99 * (n - 1))]) / 2;
  let split = 0;
  while (split < n && sorted[split] < midrange) split++;
  const lowLevel = median(sorted.subarray(0, split));
  const highLevel = median(sorted.subarray(split));

  // The noise for this first look by the median of the second differences, which a record dense
  // with edges does not disturb (a mean would count every edge as noise).
  const secondDifferences = new Float64Array(n - 2);
  for (let i = 1; i < n - 1; i++) secondDifferences[i - 1] = Math.abs(samples[i + 1] - 2 * samples[i] + samples[i - 1]);
  const noise = median(secondDifferences) / (0.6745 * Math.sqrt(6));
  if (!(highLevel - lowLevel > 10 * noise) || !(highLevel > lowLevel)) {
    throw new RingingError(
      `the record shows no square wave: it does not settle at two levels clear of the noise (levels ${lowLevel.toPrecision(4)} V and ${highLevel.toPrecision(4)} V, noise ${noise.toPrecision(2)} V); capture the unit's output driven by a square wave`,
    );
  }

  const transitions = findTransitions(samples, lowLevel, highLevel);
  if (transitions.length === 0) {
    throw new RingingError('the record never passes from one level to the other; capture at least one rising and one falling edge');
  }
  const quantumV = quantum(sorted);
  const band = settlingBandPercent / 100;
  // An edge's samples end where the next transition begins: three times that transition's 25–75 %
  // time before it leaves the first threshold. A second-order transition takes about as long to
  // reach 25 % from its start as to go on to 75 %, so three times leaves a margin.
  const ends = transitions.map((_, k) => {
    const next = transitions[k + 1];
    return next ? next.depart - 3 * (next.arrive - next.depart) - 1 : n;
  });
  const lengths = transitions.slice(0, -1).map((t, k) => ends[k] - t.arrive);
  const typicalLength = lengths.length > 0 ? median(lengths) : n;

  const edges: EdgeRinging[] = [];
  let previousLevel: number | null = null;
  transitions.forEach((t, k) => {
    const end = ends[k];
    const long = end - t.arrive >= 8 && (k < transitions.length - 1 || end - t.arrive >= 0.8 * typicalLength);
    const leaving = previousLevel ?? (t.sign > 0 ? lowLevel : highLevel);
    const edge = long ? analyzeEdge(samples, sampleIntervalS, t, end, leaving, quantumV, band) : null;
    if (edge) edges.push(edge);
    previousLevel = edge ? edge.finalLevelV : null;
  });
  if (edges.length === 0) {
    throw new RingingError('no complete edge: no edge has a settled stretch after it before the next one; capture a whole period of the square wave or more, sampled fast enough that each half period holds many samples');
  }

  const flags = new Set<RingingFlag>();
  const ringing = edges.filter((edge) => edge.ringFrequencyHz !== null);
  const medianOf = (list: readonly EdgeRinging[], value: (edge: EdgeRinging) => number) => median(list.map(value));
  if (ringing.length === 0) flags.add('no-ringing');
  else if (ringing.length < edges.length) flags.add('some-edges-without-ringing');
  // One edge of each polarity at least: two complete edges, and rising and falling ringing can differ.
  if (!edges.some((e) => e.polarity === 'rising') || !edges.some((e) => e.polarity === 'falling')) flags.add('too-few-edges');
  const settledNoise = medianOf(edges, (edge) => edge.noiseV);
  if (irregular(transitions)) flags.add('irregular-edges');
  if (looksClipped(sorted, lowLevel, highLevel, settledNoise, quantumV)) flags.add('clipped-record');
  for (const edge of ringing) for (const flag of edge.flags) if (flag === 'undersampled' || flag === 'not-decaying') flags.add(flag);
  for (const edge of edges) for (const flag of edge.flags) if (flag === 'not-settled' || flag === 'noisy') flags.add(flag);

  const judged = edges.filter((edge) => !edge.flags.includes('noisy'));
  const settling = judged.length > 0 ? medianOf(judged, (edge) => edge.settlingTimeS ?? Infinity) : Infinity;
  return {
    edges,
    lowLevelV: lowLevel,
    highLevelV: highLevel,
    stepV: medianOf(edges, (edge) => Math.abs(edge.stepV)),
    noiseV: settledNoise,
    quantumV,
    sampleIntervalS,
    settlingBandPercent,
    ringFrequencyHz: ringing.length > 0 ? medianOf(ringing, (edge) => edge.ringFrequencyHz!) : null,
    logDecrement: ringing.length > 0 ? medianOf(ringing, (edge) => edge.logDecrement!) : null,
    dampingRatio: ringing.length > 0 ? medianOf(ringing, (edge) => edge.dampingRatio!) : null,
    dampingRatioAtLeast: ringing.length > 0 ? null : Math.min(...edges.map((edge) => edge.dampingRatioAtLeast!)),
    riseTimeS: edges.some((edge) => edge.riseTimeS !== null) ? Math.max(...edges.flatMap((edge) => (edge.riseTimeS === null ? [] : [edge.riseTimeS]))) : null,
    overshootPercent: medianOf(edges, (edge) => edge.overshootPercent),
    settlingTimeS: Number.isFinite(settling) ? settling : null,
    flags: [...flags],
  };
}
