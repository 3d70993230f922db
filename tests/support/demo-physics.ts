// What the invented demo unit (shared/sim/demo-unit.ts, its circuit as its parameters document it)
// must give at the demo procedure's response, max-level and ringing steps, derived by hand from its
// parameters with textbook physics (each source beside its formula), never from the code's output.
// The demo line's and the browser's tests of the demo procedure hold the stored values to these.

import type { DemoUnitParameters } from '../../shared/sim/demo-unit.ts';

type Complex = [number, number];
const cdiv = (a: Complex, b: Complex): Complex => {
  const d = b[0] * b[0] + b[1] * b[1];
  return [(a[0] * b[0] + a[1] * b[1]) / d, (a[1] * b[0] - a[0] * b[1]) / d];
};
const cmul = (a: Complex, b: Complex): Complex => [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
const cparallel = (a: Complex, b: Complex) => cdiv(cmul(a, b), [a[0] + b[0], a[1] + b[1]]);

/**
 * The stage's small-signal response in dB at f with a net series resistance R left after the trim,
 * by Kirchhoff's voltage law round the loop (any circuits textbook): H = Zp / (R + Zc + Zp), with
 * Zc = R_d ∥ 1/(jωC) (the coupling capacitor and its damping resistor) and Zp = jωL ∥ R_L (the
 * magnetising inductance and the reflected load). The station's chain is taken out by main, so this
 * is what the response step must find.
 */
export function stageDb(p: DemoUnitParameters, netOhms: number, f: number): number {
  const w = 2 * Math.PI * f;
  const zc = cparallel([p.couplingDampingOhms, 0], cdiv([1, 0], [0, w * p.couplingFarads]));
  const zp = cparallel([0, w * p.magnetizingHenries], [p.reflectedLoadOhms, 0]);
  const h = cdiv(zp, [netOhms + zc[0] + zp[0], zc[1] + zp[1]]);
  return 20 * Math.log10(Math.hypot(h[0], h[1]));
}

/**
 * The response's smallest distance inside the file's mask, from the circuit: the mask's bounds
 * straight lines in log frequency between its points (docs/procedures.md), the response relative
 * to `referenceHz`, over a fine grid (1/96 octave) of the mask's span.
 */
export function expectedMaskMarginDb(p: DemoUnitParameters, netOhms: number, step: { referenceHz: number; mask: { frequencyHz: number; lowDb: number; highDb: number }[] }): number {
  const mask = step.mask;
  const reference = stageDb(p, netOhms, step.referenceHz);
  let margin = Infinity;
  const from = mask[0].frequencyHz;
  const to = mask[mask.length - 1].frequencyHz;
  for (let f = from; f <= to * 1.0001; f *= 2 ** (1 / 96)) {
    const k = Math.max(0, mask.findIndex((m, i) => i > 0 && f <= m.frequencyHz * 1.0001) - 1);
    const a = mask[k];
    const b = mask[k + 1];
    const t = Math.log(f / a.frequencyHz) / Math.log(b.frequencyHz / a.frequencyHz);
    const level = stageDb(p, netOhms, Math.min(f, to)) - reference;
    margin = Math.min(margin, level - (a.lowDb + t * (b.lowDb - a.lowDb)), a.highDb + t * (b.highDb - a.highDb) - level);
  }
  return margin;
}

/**
 * The output level in dBu where the driver's THD+N reaches the max-level step's threshold at its
 * frequency. The driver (demo-unit.ts, as its parameters document it): G·V·(x − d₃x³ + d₂x²) for an
 * input x in full-scale units, then linear to the knee and knee + span·tanh((|v| − knee)/span)
 * beyond it (span = swing − knee). Its harmonics come from the Fourier series of one period of that
 * transfer driven by a sine, summed by hand here (a 4096-point DFT, exact for a periodic signal
 * band-limited below 2048 harmonics; the tanh's series dies off long before). THD+N is all but the
 * fundamental relative to it (the noise is 80 dB below). At 1 kHz the trimmed transformer passes
 * the driver's voltage to the 10 kΩ load within a few thousandths of a dB, so the output in dBu is
 * the fundamental's peak in full-scale units (AES17: a sine's dBFS is its peak) plus the station's
 * input full scale in dBu.
 */
export function expectedMaxLevelDbu(p: DemoUnitParameters, thresholdPercent: number, fullScaleDbu: number): number {
  const transfer = (v: number) => {
    const m = Math.abs(v);
    if (m <= p.driverKneeVolts) return v;
    const span = p.driverSwingVolts - p.driverKneeVolts;
    return Math.sign(v) * (p.driverKneeVolts + span * Math.tanh((m - p.driverKneeVolts) / span));
  };
  const n = 4096;
  const analyse = (peak: number) => {
    let re = 0;
    let im = 0;
    let mean = 0;
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const x = peak * Math.sin((2 * Math.PI * i) / n);
      y[i] = transfer(p.driverGain * p.driveVoltsPerFullScale * (x + p.driverSquare * x * x - p.driverCubic * x * x * x));
      mean += y[i] / n;
    }
    let total = 0;
    for (let i = 0; i < n; i++) {
      re += (2 / n) * y[i] * Math.sin((2 * Math.PI * i) / n);
      im += (2 / n) * y[i] * Math.cos((2 * Math.PI * i) / n);
      total += (y[i] - mean) ** 2 / n;
    }
    const fundamental = Math.hypot(re, im);
    return { thdn: Math.sqrt(Math.max(0, total - fundamental ** 2 / 2)) / (fundamental / Math.SQRT2), fundamentalFs: fundamental / p.driveVoltsPerFullScale };
  };
  let lo = 0.01;
  let hi = 1.5;
  for (let k = 0; k < 60; k++) {
    const mid = (lo + hi) / 2;
    if (analyse(mid).thdn * 100 < thresholdPercent) lo = mid;
    else hi = mid;
  }
  return 20 * Math.log10(analyse(lo).fundamentalFs) + fullScaleDbu;
}

/** The ringing a scope shows of a second-order system (Ogata): ωd = ωn√(1−ζ²), overshoot exp(−ζπ/√(1−ζ²)). */
export const expectedRinging = (p: DemoUnitParameters) => ({
  ringFrequencyHz: p.hfNaturalHz * Math.sqrt(1 - p.hfDampingRatio ** 2),
  dampingRatio: p.hfDampingRatio,
  overshootPercent: 100 * Math.exp((-p.hfDampingRatio * Math.PI) / Math.sqrt(1 - p.hfDampingRatio ** 2)),
});

