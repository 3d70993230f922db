// The exponential (logarithmic) sine sweep after A. Farina, "Simultaneous measurement of impulse
// response and distortion with a swept-sine technique", AES preprint 5093 (2000):
// x(t) = A·sin(2π·f1·L·(e^(t/L) − 1)), L = T / ln(f2/f1), whose frequency f1·e^(t/L) rises by the
// same ratio every second. One function makes the samples; the offline `sweep --write` writes them
// and the generator plays the same array, so an analysis always knows exactly what was played.

import { peakFromDbfs } from '../levels.ts';

export interface LogSweepSpec {
  startHz: number;
  endHz: number;
  /** From the start frequency to the end frequency at full level, seconds; the fades and silences come on top. */
  durationS: number;
  sampleRateHz: number;
  /** AES17: a full-scale sine (RMS 1/√2, peak 1) is 0 dBFS, so the sweep's peak is 10^(level/20). */
  levelDbfs: number;
}

/**
 * Silence before the sweep: an interface's output often starts a moment after playback is asked
 * for, and some ramp or mute their first milliseconds; a fifth of a second keeps the sweep's start
 * clear of that and lets the unit's output sit still before it is driven.
 */
export const LOG_SWEEP_SILENCE_BEFORE_S = 0.2;
/**
 * Silence after the sweep: holds the round trip through the interface (usually well under 0.1 s)
 * and the unit's decay from the top frequency, so a capture as long as the stimulus still holds the
 * whole response.
 */
export const LOG_SWEEP_SILENCE_AFTER_S = 0.5;
/**
 * The fades lie outside the band asked for: the sweep runs on by the same formula a twelfth of an
 * octave below its start and above its end while it fades, so it plays at full level from the
 * start frequency to the end frequency and a capture holds every frequency of the band in full.
 * A fade inside the band would leave its ends with little signal, and a capture's noise there
 * divided by it would swamp the reading. A twelfth of an octave also lasts several times the
 * sweep's own pace at the top (it stays near one frequency f for about √(L/f) s: 8 ms at 20 kHz in
 * a 10 s sweep), so the ends are gradual: an end cut off faster rings across the inverse filter's
 * spectrum (Fresnel ripple, about 1 % an octave away), which cancels in the linear response but
 * not under a harmonic's impulse response.
 */
const FADE_OCTAVES = 1 / 12;
/**
 * The fade-in lasts at least this many cycles of the start frequency. A transformer driven from
 * rest by a low-frequency sine that starts abruptly carries a flux offset of up to its full peak
 * flux (the integral of a sine started at zero does not average to zero), which can push the core
 * towards saturation; a fade over a few cycles lets the flux build symmetrically.
 */
const FADE_IN_MIN_CYCLES = 2;
/**
 * The longest sweep, fades included, samples: about 43.7 s at 48 kHz, 10.9 s at 192 kHz. The
 * analysis transforms the capture and the sweep together in one FFT, whose memory grows with both.
 */
export const LOG_SWEEP_MAX_SAMPLES = 2 ** 21;
/** Shortest sweep from start to end frequency, seconds. */
export const LOG_SWEEP_MIN_DURATION_S = 0.1;

export interface LogSweepLayout {
  /** Index of the sweep's first sample in the stimulus: its fade-in starts after the leading silence. */
  sweepStart: number;
  /** The sweep with its fades, samples. */
  sweepLength: number;
  /** Fade-in, below the start frequency, and fade-out, above the end frequency, samples. */
  fadeInLength: number;
  fadeOutLength: number;
  /** Samples at full level, from the start frequency (t = 0 in Farina's formula) to the end frequency: T·fs. */
  fullLevelLength: number;
  /** The whole stimulus: silence, sweep, silence. */
  totalLength: number;
  /** Farina's L = T / ln(f2/f1), seconds: the time in which the frequency rises by a factor of e. */
  rateS: number;
  peakAmplitude: number;
}

/** Where everything lies in the stimulus; throws RangeError naming the parameter that cannot be played. */
export function logSweepLayout(spec: LogSweepSpec): LogSweepLayout {
  const { startHz, endHz, durationS, sampleRateHz, levelDbfs } = spec;
  if (!(Number.isInteger(sampleRateHz) && sampleRateHz > 0)) throw new RangeError(`the sample rate must be a whole number of Hz above 0, got ${sampleRateHz}`);
  const nyquist = sampleRateHz / 2;
  // The fade-out runs a twelfth of an octave above the end, and must stay below Nyquist too.
  const highestEndHz = Math.floor(nyquist / 2 ** FADE_OCTAVES);
  if (!(startHz > 0 && Number.isFinite(startHz))) throw new RangeError(`the sweep must start above 0 Hz, got ${startHz} Hz`);
  if (!(endHz > startHz && endHz <= highestEndHz)) {
    throw new RangeError(`the sweep must end above its start (${startHz} Hz) and at most at ${highestEndHz} Hz, so that its fade above the end stays below Nyquist (${nyquist} Hz); got ${endHz} Hz`);
  }
  if (!(durationS >= LOG_SWEEP_MIN_DURATION_S && Number.isFinite(durationS))) throw new RangeError(`the sweep must last at least ${LOG_SWEEP_MIN_DURATION_S} s, got ${durationS} s`);
  // Never louder than a full-scale sine, as the stimulus is everywhere else.
  if (!(levelDbfs <= 0 && Number.isFinite(levelDbfs))) throw new RangeError(`the sweep's level must be 0 dBFS or below, got ${levelDbfs} dBFS`);
  const rateS = durationS / Math.log(endHz / startHz);
  const fadeS = rateS * FADE_OCTAVES * Math.LN2;
  const fadeInLength = Math.round(Math.max(fadeS, FADE_IN_MIN_CYCLES / startHz) * sampleRateHz);
  const fadeOutLength = Math.round(fadeS * sampleRateHz);
  const fullLevelLength = Math.round(durationS * sampleRateHz);
  const sweepLength = fadeInLength + fullLevelLength + fadeOutLength;
  if (sweepLength > LOG_SWEEP_MAX_SAMPLES) {
    throw new RangeError(`the sweep may hold at most ${LOG_SWEEP_MAX_SAMPLES} samples with its fades (${(LOG_SWEEP_MAX_SAMPLES / sampleRateHz).toFixed(1)} s at ${sampleRateHz} Hz), got ${durationS} s`);
  }
  const sweepStart = Math.round(LOG_SWEEP_SILENCE_BEFORE_S * sampleRateHz);
  return {
    sweepStart,
    sweepLength,
    fadeInLength,
    fadeOutLength,
    fullLevelLength,
    totalLength: sweepStart + sweepLength + Math.round(LOG_SWEEP_SILENCE_AFTER_S * sampleRateHz),
    rateS,
    peakAmplitude: peakFromDbfs(levelDbfs),
  };
}

/** The whole stimulus: silence, the faded sweep, silence. */
export function logSweep(spec: LogSweepSpec): Float32Array {
  return renderSweep(spec, 0);
}

/**
 * The same sweep a quarter cycle ahead (cos where the sweep has sin), for telling how much of a
 * capture follows the sweep at whatever phase the unit puts on it.
 */
export function logSweepQuadrature(spec: LogSweepSpec): Float32Array {
  return renderSweep(spec, Math.PI / 2);
}

function renderSweep(spec: LogSweepSpec, phaseOffset: number): Float32Array {
  const layout = logSweepLayout(spec);
  const { sweepStart, sweepLength, fadeInLength, fadeOutLength, rateS, peakAmplitude } = layout;
  const out = new Float32Array(layout.totalLength);
  const phaseScale = 2 * Math.PI * spec.startHz * rateS;
  for (let i = 0; i < sweepLength; i++) {
    // t = 0 where the sweep reaches the start frequency; the fade-in runs at negative t.
    const t = (i - fadeInLength) / spec.sampleRateHz;
    // Raised-cosine fades: zero value and zero slope at both ends, so nothing steps.
    let gain = 1;
    if (i < fadeInLength) gain = 0.5 - 0.5 * Math.cos((Math.PI * i) / fadeInLength);
    const fromEnd = sweepLength - 1 - i;
    if (fromEnd < fadeOutLength) gain = 0.5 - 0.5 * Math.cos((Math.PI * fromEnd) / fadeOutLength);
    out[sweepStart + i] = peakAmplitude * gain * Math.sin(phaseScale * Math.expm1(t / rateS) + phaseOffset);
  }
  return out;
}

/** When the sweep plays `frequencyHz`, seconds after it passes the start frequency: L·ln(f/f1). */
export function sweepTimeAtS(spec: Pick<LogSweepSpec, 'startHz'>, layout: Pick<LogSweepLayout, 'rateS'>, frequencyHz: number): number {
  return layout.rateS * Math.log(frequencyHz / spec.startHz);
}

/**
 * How long before the linear impulse response the n-th harmonic's lands, seconds: Farina's
 * Δt = T·ln(n)/ln(f2/f1) = L·ln(n). The n-th harmonic of the sweep at time t has the frequency the
 * sweep itself reaches L·ln(n) later, so the inverse filter compresses it that much earlier.
 */
export function harmonicAdvanceS(layout: Pick<LogSweepLayout, 'rateS'>, order: number): number {
  return layout.rateS * Math.log(order);
}
