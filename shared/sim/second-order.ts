// A second-order system's response to a step and to a square wave, and what an oscilloscope's ADC
// keeps of a trace. The demo bench writes its invented units' scope records from these, and the
// ringing tests build their synthetic records from them: one copy of the formulas.
//
// Step response of a second-order low-pass (Ogata, Modern Control Engineering, the transient
// response of second-order systems).

export interface SecondOrder {
  /** Damping ratio ζ. */
  zeta: number;
  /** Natural frequency fn = ωn/2π, Hz. */
  naturalHz: number;
}

/**
 * The unit step response at time t (0 before the step). Underdamped (Ogata):
 * y = 1 − e^{−ζωn t}(cos ωd t + ζ/√(1−ζ²) sin ωd t), ωd = ωn√(1−ζ²). Critically damped:
 * y = 1 − e^{−ωn t}(1 + ωn t). Overdamped, with s1,2 = ωn(ζ ± √(ζ²−1)):
 * y = 1 + ωn/(2√(ζ²−1))·(e^{−s1 t}/s1 − e^{−s2 t}/s2).
 */
export function stepResponse({ zeta, naturalHz }: SecondOrder, t: number): number {
  if (t <= 0) return 0;
  const wn = 2 * Math.PI * naturalHz;
  if (zeta < 1) {
    const root = Math.sqrt(1 - zeta * zeta);
    const wd = wn * root;
    return 1 - Math.exp(-zeta * wn * t) * (Math.cos(wd * t) + (zeta / root) * Math.sin(wd * t));
  }
  if (zeta === 1) return 1 - Math.exp(-wn * t) * (1 + wn * t);
  const root = Math.sqrt(zeta * zeta - 1);
  const s1 = wn * (zeta + root);
  const s2 = wn * (zeta - root);
  return 1 + (wn / (2 * root)) * (Math.exp(-s1 * t) / s1 - Math.exp(-s2 * t) / s2);
}

export interface SquareWaveRecord {
  system: SecondOrder;
  squareHz: number;
  sampleIntervalS: number;
  samples: number;
  lowV: number;
  highV: number;
  /** Time of the first (rising) edge of the generator's square wave, from the first sample. */
  firstEdgeS: number;
}

/** The system's response to a square wave, by superposition of step responses (linearity). */
export function squareWaveResponse(r: SquareWaveRecord): Float64Array {
  const out = new Float64Array(r.samples);
  const half = 1 / (2 * r.squareHz);
  const step = r.highV - r.lowV;
  for (let i = 0; i < r.samples; i++) {
    const t = i * r.sampleIntervalS;
    let y = r.lowV;
    for (let k = 0; r.firstEdgeS + k * half <= t; k++) {
      y += (k % 2 === 0 ? step : -step) * stepResponse(r.system, t - r.firstEdgeS - k * half);
    }
    out[i] = y;
  }
  return out;
}

export interface ScopeCapture {
  /** The screen's span in volts, which the ADC's codes cover; values beyond are clipped. */
  screenV: [number, number];
  bits: number;
  /** RMS noise added before quantisation, volts. */
  noiseV: number;
  /** Standard normal deviates for the noise. */
  normal: () => number;
}

/** What a scope's ADC keeps: noise added, rounded to 2^bits codes over the screen, clipped at its edges. */
export function scopeCapture(values: Float64Array, c: ScopeCapture): Float64Array {
  const codes = 2 ** c.bits;
  const lsb = (c.screenV[1] - c.screenV[0]) / codes;
  return values.map((v) => {
    const code = Math.round((v + c.noiseV * c.normal() - c.screenV[0]) / lsb);
    return c.screenV[0] + Math.min(codes - 1, Math.max(0, code)) * lsb;
  });
}

/**
 * A scope's usual view of a trace: the screen 8 % wider than the trace each way, 8 bits (the usual
 * vertical resolution of bench scopes, common practice), `noiseCodes` codes of noise.
 */
export function scopeView(clean: Float64Array, normal: () => number, noiseCodes = 0.5): Float64Array {
  let min = Infinity;
  let max = -Infinity;
  for (const v of clean) {
    min = Math.min(min, v);
    max = Math.max(max, v);
  }
  const pad = 0.08 * (max - min);
  return scopeCapture(clean, { screenV: [min - pad, max + pad], bits: 8, noiseV: (noiseCodes * (max - min + 2 * pad)) / 256, normal });
}
