// The exponential sweep and what one capture of it gives: impulse response, latency, frequency
// response and harmonic distortion (A. Farina, AES preprint 5093, 2000).

import { describe, expect, it } from 'vitest';
import { harmonicAdvanceS, logSweep, logSweepLayout, type LogSweepSpec } from '../../shared/dsp/log-sweep.ts';
import { analyzeSweepResponse, deconvolveSweep, responseFrequencies, sweepInverseFilter, type SweepResponse } from '../../shared/measurement/sweep-response.ts';
import { butterworthHighPass2, filtered, magnitude, phaseDeg, rcLowPass, type AnalogueResponse } from '../support/analogue-filters.ts';
import { gaussian, seededRandom } from '../support/random.ts';

const RATE = 48000;
// From 10 Hz, an octave below the band the response is checked over, to 22 kHz, above it: the
// band's ends then lie well inside the sweep (the analysis's own comment says why that matters).
const WIDE: LogSweepSpec = { startHz: 10, endHz: 22000, durationS: 10, sampleRateHz: RATE, levelDbfs: -6 };

const wrap180 = (deg: number) => deg - 360 * Math.round(deg / 360);

function analysed(capture: ArrayLike<number>, spec: LogSweepSpec, options: Parameters<typeof analyzeSweepResponse>[2] = {}): SweepResponse {
  const outcome = analyzeSweepResponse(capture, spec, options);
  if (!outcome.ok) throw new Error(outcome.reason);
  return outcome.result;
}

function delayed(samples: ArrayLike<number>, delay: number, gain = 1): Float64Array {
  const out = new Float64Array(samples.length + delay);
  for (let i = 0; i < samples.length; i++) out[delay + i] = gain * samples[i];
  return out;
}

describe('the exponential sweep', () => {
  it('plays at the level asked: its steady part has the RMS of a sine of peak 10^(L/20) (AES17: a full-scale sine is 0 dBFS)', () => {
    for (const levelDbfs of [0, -6, -20.5]) {
      const spec = { ...WIDE, durationS: 2, levelDbfs };
      const layout = logSweepLayout(spec);
      const x = logSweep(spec);
      const start = layout.sweepStart + layout.fadeInLength;
      const steady = x.subarray(start, start + layout.fullLevelLength);
      let sum = 0;
      let peak = 0;
      for (const v of steady) {
        sum += v * v;
        peak = Math.max(peak, Math.abs(v));
      }
      // A sine's RMS is its peak over √2, so the level of a sine with this RMS is 20·log10(RMS·√2).
      expect(Math.abs(20 * Math.log10(Math.sqrt(sum / steady.length) * Math.SQRT2) - levelDbfs)).toBeLessThan(0.01);
      expect(peak).toBeLessThanOrEqual(10 ** (levelDbfs / 20) * (1 + 1e-6));
    }
  });

  it('follows Farina’s x(t) = A·sin(2π·f1·L·(e^(t/L) − 1)), L = T/ln(f2/f1), at full level from f1 to f2 (Farina 2000, from memory)', () => {
    const spec = { ...WIDE, durationS: 3 };
    const x = logSweep(spec);
    const layout = logSweepLayout(spec);
    const A = 10 ** (spec.levelDbfs / 20);
    const L = spec.durationS / Math.log(spec.endHz / spec.startHz);
    for (const t of [0.5, 1.234, 2.5]) {
      const i = Math.round(t * RATE);
      const expected = A * Math.sin(2 * Math.PI * spec.startHz * L * (Math.exp(i / RATE / L) - 1));
      // Float32 samples: within a few parts in 10⁷ of A.
      expect(Math.abs(x[layout.sweepStart + layout.fadeInLength + i] - expected)).toBeLessThan(1e-6);
    }
  });

  it('starts and ends at zero through its fades, with silence before and after it', () => {
    const spec = { ...WIDE, durationS: 2 };
    const x = logSweep(spec);
    const layout = logSweepLayout(spec);
    const A = 10 ** (spec.levelDbfs / 20);
    expect(layout.sweepStart).toBe(Math.round(0.2 * RATE));
    expect(layout.fullLevelLength).toBe(2 * RATE);
    expect(layout.sweepLength).toBe(layout.fadeInLength + 2 * RATE + layout.fadeOutLength);
    expect(layout.totalLength).toBe(layout.sweepStart + layout.sweepLength + Math.round(0.5 * RATE));
    expect(x.subarray(0, layout.sweepStart).every((v) => v === 0)).toBe(true);
    expect(x.subarray(layout.sweepStart + layout.sweepLength).every((v) => v === 0)).toBe(true);
    const first = x.subarray(layout.sweepStart, layout.sweepStart + 8);
    const last = x.subarray(layout.sweepStart + layout.sweepLength - 8, layout.sweepStart + layout.sweepLength);
    // A raised cosine has zero value and zero slope at its ends (common practice for click-free fades).
    for (const v of [...first, ...last]) expect(Math.abs(v)).toBeLessThan(1e-3 * A);
    // Full level is reached only after the fade-in; a sweep with no fade is at full level almost at once.
    expect(Math.max(...x.subarray(layout.sweepStart, layout.sweepStart + Math.floor(layout.fadeInLength / 4)).map(Math.abs))).toBeLessThan(0.2 * A);
    expect(layout.fadeInLength).toBeGreaterThan(0);
    expect(layout.fadeOutLength).toBeGreaterThan(0);
  });

  it('refuses what cannot be played, naming it', () => {
    // The fade-out runs a twelfth of an octave above the end: 24 kHz / 2^(1/12) = 22.65 kHz at most.
    expect(() => logSweepLayout({ ...WIDE, endHz: 22700 })).toThrow(/at most at 22652 Hz, so that its fade above the end stays below Nyquist \(24000 Hz\)/);
    expect(() => logSweepLayout({ ...WIDE, endHz: 22650 })).not.toThrow();
    expect(() => logSweepLayout({ ...WIDE, startHz: 0 })).toThrow(/start above 0 Hz/);
    expect(() => logSweepLayout({ ...WIDE, levelDbfs: 1 })).toThrow(/0 dBFS or below/);
    expect(() => logSweepLayout({ ...WIDE, durationS: 0.05 })).toThrow(/at least 0.1 s/);
    expect(() => logSweepLayout({ ...WIDE, durationS: 100 })).toThrow(/at most 2097152 samples with its fades/);
  });
});

describe('deconvolution by the inverse filter (Farina 2000)', () => {
  it('compresses the sweep itself to a pulse of unit gain in the band (stationary phase: |X(f)| = (A/2)·√(L/f))', () => {
    const spec = { ...WIDE, durationS: 3 };
    const x = logSweep(spec);
    const ir = deconvolveSweep(x, sweepInverseFilter(spec, x));
    const layout = logSweepLayout(spec);
    let peak = 0;
    for (let i = 0; i < ir.length; i++) if (Math.abs(ir[i]) > Math.abs(ir[peak])) peak = i;
    // Linear convolution with the reversed sweep lines up at the sweep's last sample.
    expect(peak).toBe(layout.sweepStart + layout.sweepLength - 1);
    // The pulse's gain at 1 kHz (a DFT over ±0.1 s) is 1: 0 dB within 0.01 dB.
    let re = 0;
    let im = 0;
    for (let i = peak - 4800; i <= peak + 4800; i++) {
      re += ir[i] * Math.cos((2 * Math.PI * 1000 * (i - peak)) / RATE);
      im -= ir[i] * Math.sin((2 * Math.PI * 1000 * (i - peak)) / RATE);
    }
    expect(Math.abs(20 * Math.log10(Math.hypot(re, im)))).toBeLessThan(0.01);
  });

  it('finds the latency exactly for a whole-sample delay, whatever the gain and polarity', () => {
    const spec = { ...WIDE, startHz: 20, durationS: 3 };
    const x = logSweep(spec);
    for (const [delay, gain] of [[0, 1], [1, 1], [517, 0.3], [12345, -2]] as const) {
      expect(analysed(delayed(x, delay, gain), spec).latencySamples).toBe(delay);
    }
  });

  it('places the 2nd and 3rd harmonics’ impulse responses Δt = T·ln(n)/ln(f2/f1) before the linear one (Farina 2000)', () => {
    const spec: LogSweepSpec = { startHz: 20, endHz: 6000, durationS: 3, sampleRateHz: RATE, levelDbfs: -20 };
    const x = logSweep(spec);
    const y = Float64Array.from(x, (v) => v + 0.1 * v * v + 0.3 * v * v * v);
    const ir = deconvolveSweep(y, sweepInverseFilter(spec, x));
    let linearPeak = 0;
    for (let i = 0; i < ir.length; i++) if (Math.abs(ir[i]) > Math.abs(ir[linearPeak])) linearPeak = i;
    const dt = (n: number) => (spec.durationS * Math.log(n)) / Math.log(spec.endHz / spec.startHz);
    for (const n of [2, 3]) {
      // Look over the whole stretch between the neighbouring orders' predicted places.
      const from = Math.round(linearPeak - ((dt(n) + dt(n + 1)) / 2) * RATE);
      const to = Math.round(linearPeak - ((dt(n) + dt(n - 1)) / 2) * RATE);
      let found = from;
      for (let i = from; i < to; i++) if (Math.abs(ir[i]) > Math.abs(ir[found])) found = i;
      // Within half a period of the band's top (6 kHz: 4 samples), the harmonic's pulse being phase-turned.
      expect(Math.abs(found - (linearPeak - dt(n) * RATE))).toBeLessThanOrEqual(4);
      expect(harmonicAdvanceS(logSweepLayout(spec), n)).toBeCloseTo(dt(n), 12);
    }
  });
});

describe('the response of known filters, applied exactly in the frequency domain', () => {
  const x = logSweep(WIDE);
  const delay = 1234;

  function worstErrors(result: SweepResponse, h: AnalogueResponse) {
    const reference = magnitude(h(1000));
    let levelDb = 0;
    let phase = 0;
    for (const p of result.response) {
      levelDb = Math.max(levelDb, Math.abs(p.levelDb - 20 * Math.log10(magnitude(h(p.frequencyHz)) / reference)));
      phase = Math.max(phase, Math.abs(wrap180(p.phaseDeg - phaseDeg(h(p.frequencyHz)))));
    }
    return { levelDb, phase };
  }

  it.each([
    ['a first-order RC low-pass at 1 kHz: |H| = 1/√(1 + (f/fc)²), ∠H = −atan(f/fc)', rcLowPass(1000)],
    ['a second-order Butterworth high-pass at 50 Hz: |H|² = (f/fc)⁴/(1 + (f/fc)⁴)', butterworthHighPass2(50)],
    ['a second-order Butterworth high-pass at 20 Hz', butterworthHighPass2(20)],
  ])('reads %s within 0.05 dB from 20 Hz to 20 kHz', (_name, h) => {
    // The latency is given, so the phase left is the filter's own (the peak of a filtered pulse moves).
    const result = analysed(filtered(x, RATE, h, delay), WIDE, { fromHz: 20, toHz: 20000, latencySamples: delay });
    expect(result.response[0].frequencyHz).toBe(20);
    expect(result.response.at(-1)!.frequencyHz).toBe(20000);
    const worst = worstErrors(result, h);
    expect(worst.levelDb).toBeLessThan(0.05);
    expect(worst.phase).toBeLessThan(0.2);
  });

  it('reads a wire as flat from the sweep’s first frequency to its last, and finds the delay itself', () => {
    const result = analysed(delayed(x, delay), WIDE);
    expect(result.response[0].frequencyHz).toBe(WIDE.startHz);
    expect(result.response.at(-1)!.frequencyHz).toBe(WIDE.endHz);
    expect(result.latencySamples).toBe(delay);
    for (const p of result.response) {
      expect(Math.abs(p.levelDb)).toBeLessThan(1e-6);
      expect(Math.abs(p.phaseDeg)).toBeLessThan(1e-6);
    }
  });
});

describe('harmonic distortion of a memoryless polynomial y = x + a2·x² + a3·x³', () => {
  // For x = A·sin θ: sin²θ = (1 − cos 2θ)/2 and sin³θ = (3·sin θ − sin 3θ)/4 (trigonometric
  // identities), so H2 = a2·A²/2 and H3 = a3·A³/4 beside a fundamental of A + ¾·a3·A³.
  const A = 0.1;
  const a2 = 0.1;
  const a3 = 0.3;
  const fundamental = A + 0.75 * a3 * A ** 3;
  const expectedDbc = { 2: 20 * Math.log10((a2 * A * A) / 2 / fundamental), 3: 20 * Math.log10((a3 * A ** 3) / 4 / fundamental) } as Record<number, number>;
  // The products must stay below Nyquist unaliased: 3 × 6 kHz = 18 kHz < 24 kHz.
  const spec: LogSweepSpec = { startHz: 20, endHz: 6000, durationS: 10, sampleRateHz: RATE, levelDbfs: 20 * Math.log10(A) };
  let analysedOnce: SweepResponse | undefined;
  const result = () => (analysedOnce ??= analysed(Float64Array.from(logSweep(spec), (v) => v + a2 * v * v + a3 * v * v * v), spec));

  it('reads H2 = a2·A/2 and H3 = a3·A²/4 relative to the fundamental within 0.5 dB, wherever it reads them', () => {
    for (const order of [2, 3]) {
      const series = result().harmonics.find((h) => h.order === order)!;
      // Read over most of the band: from within an octave of the start to within a quarter octave of the end.
      expect(series.points[0].frequencyHz).toBeLessThan(40);
      expect(series.points.at(-1)!.frequencyHz).toBeGreaterThan(spec.endHz / order / 2 ** (1 / 4));
      for (const p of series.points) expect(Math.abs(p.levelDbc - expectedDbc[order])).toBeLessThan(0.5);
    }
  });

  it('indexes each product by its fundamental and reads none beyond the sweep’s end', () => {
    for (const series of result().harmonics) {
      for (const p of series.points) expect(series.order * p.frequencyHz).toBeLessThanOrEqual(spec.endHz);
      // The points are the response's own frequencies, each a fundamental.
      const grid = new Set(result().response.map((r) => r.frequencyHz));
      for (const p of series.points) expect(grid.has(p.frequencyHz)).toBe(true);
    }
  });

  it('finds no 4th or 5th harmonic where the polynomial makes none', () => {
    for (const order of [4, 5]) {
      const series = result().harmonics.find((h) => h.order === order)!;
      for (const p of series.points) expect(p.levelDbc).toBeLessThan(-100);
    }
  });
});

describe('harmonics near the top of the band', () => {
  it('are read only up to 0.45 × the sample rate, below the converters’ anti-alias filters (common practice), even when the sweep goes higher', () => {
    const spec: LogSweepSpec = { startHz: 20, endHz: 22600, durationS: 3, sampleRateHz: RATE, levelDbfs: -6 };
    // A range of exactly ten octaves puts a point on 10.9 kHz, whose H2 (21.8 kHz) lies inside the
    // sweep but above 21.6 kHz.
    const result = analysed(logSweep(spec), spec, { fromHz: 10900 / 2 ** 9, toHz: 21800 });
    expect(result.response.some((p) => Math.abs(p.frequencyHz - 10900) < 1e-6)).toBe(true);
    for (const series of result.harmonics) {
      expect(series.points.length).toBeGreaterThan(0);
      for (const p of series.points) expect(series.order * p.frequencyHz).toBeLessThanOrEqual(0.45 * RATE);
    }
  });
});

describe('what the analysis refuses', () => {
  const spec = { ...WIDE, startHz: 20, durationS: 3 };
  const x = logSweep(spec);

  it('a capture of noise alone: no impulse response stands out', () => {
    const noise = gaussian(seededRandom(3));
    const outcome = analyzeSweepResponse(Float64Array.from({ length: x.length + 1000 }, () => 0.1 * noise()), spec);
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.reason).toMatch(/does not hold the sweep clearly/);
  });

  it('a capture that ends before the sweep does', () => {
    const outcome = analyzeSweepResponse(delayed(x, 48000).subarray(0, x.length), spec);
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) expect(outcome.reason).toMatch(/ends 0\.\d+ s before the sweep did/);
    const short = analyzeSweepResponse(x.subarray(0, 1000), spec);
    expect(!short.ok && short.reason).toMatch(/fewer than the/);
  });

  it('a sweep too short to separate its harmonics at the lowest frequency', () => {
    const brief = { ...WIDE, startHz: 20, durationS: 1 };
    const outcome = analyzeSweepResponse(logSweep(brief), brief);
    expect(!outcome.ok && outcome.reason).toMatch(/cannot resolve 20 Hz.*Sweep for at least 2(\.\d)? s/);
  });

  it.each([
    ['a sweep from 21 Hz read as one from 20 Hz', { startHz: 21 }],
    ['a 3.1 s sweep read as a 3 s one', { durationS: 3.1 }],
    ['a sweep to 19 kHz read as one to 22 kHz', { endHz: 19000 }],
  ])('%s: the capture does not follow the sweep described', (_what, change) => {
    const outcome = analyzeSweepResponse(logSweep({ ...spec, ...change }), spec);
    expect(!outcome.ok && outcome.reason).toMatch(/does not follow this sweep/);
  });

  it('a non-finite sample', () => {
    const bad = Float64Array.from(x);
    bad[777] = Number.NaN;
    const outcome = analyzeSweepResponse(bad, spec);
    expect(!outcome.ok && outcome.reason).toMatch(/non-finite sample at 777/);
  });
});

describe('response frequencies', () => {
  it('run from the first to the last, at most 1/12 octave apart', () => {
    for (const [from, to] of [[20, 20000], [10, 22000], [1000, 1001]]) {
      const f = responseFrequencies(from, to);
      expect(f[0]).toBe(from);
      expect(f.at(-1)).toBe(to);
      for (let i = 1; i < f.length; i++) expect(Math.log2(f[i] / f[i - 1])).toBeLessThanOrEqual(1 / 12 + 1e-12);
    }
  });
});
