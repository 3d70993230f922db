// Least-squares sine fits after IEEE Std 1241 (ADC test methods): the three-parameter fit at a
// known frequency and the iterative four-parameter fit that also finds the frequency. Used for
// the whole-record fundamental frequency of the offline analysis, and as the reference method.

import { ComplexSolver } from './complex-solve.ts';

export interface SineFit {
  frequencyHz: number;
  /** Peak amplitude of the fitted A·cos(2πft + φ) + C. */
  amplitude: number;
  phaseRad: number;
  offset: number;
  /** RMS of the record minus the fit: the record's noise and distortion. */
  residualRms: number;
  iterations: number;
}

const solver = new ComplexSolver(4);

/**
 * Accumulates the normal equations for the columns cos(ωn), sin(ωn), 1 and, with `slope`, the
 * frequency-derivative column (n/N)·(−a·sin(ωn) + b·cos(ωn)); solves them; returns the solution.
 */
function solveNormalEquations(samples: ArrayLike<number>, omega: number, slope: { a: number; b: number } | null): number[] {
  const size = slope ? 4 : 3;
  const s = solver.capacity;
  solver.gRe.fill(0);
  solver.gIm.fill(0);
  solver.bRe.fill(0);
  solver.bIm.fill(0);
  const column = [0, 0, 0, 0];
  // cos/sin by rotation, re-synchronised every 4096 samples to keep rounding from growing.
  let c = 1;
  let sn = 0;
  const stepC = Math.cos(omega);
  const stepS = Math.sin(omega);
  for (let n = 0; n < samples.length; n++) {
    if ((n & 4095) === 0) {
      c = Math.cos(omega * n);
      sn = Math.sin(omega * n);
    }
    column[0] = c;
    column[1] = sn;
    column[2] = 1;
    // n scaled by 1/N keeps the normal equations well conditioned; the caller rescales.
    if (slope) column[3] = (n / samples.length) * (-slope.a * sn + slope.b * c);
    const x = samples[n];
    for (let i = 0; i < size; i++) {
      solver.bRe[i] += column[i] * x;
      for (let j = 0; j < size; j++) solver.gRe[i * s + j] += column[i] * column[j];
    }
    const nextC = c * stepC - sn * stepS;
    sn = sn * stepC + c * stepS;
    c = nextC;
  }
  if (!solver.solve(size)) throw new Error('sine fit: the record does not determine a sine (too short or silent)');
  return Array.from(solver.bRe.subarray(0, size));
}

function describe(samples: ArrayLike<number>, omega: number, a: number, b: number, offset: number, sampleRateHz: number, iterations: number): SineFit {
  let residual = 0;
  for (let n = 0; n < samples.length; n++) {
    const e = samples[n] - (a * Math.cos(omega * n) + b * Math.sin(omega * n) + offset);
    residual += e * e;
  }
  return {
    frequencyHz: (omega * sampleRateHz) / (2 * Math.PI),
    amplitude: Math.hypot(a, b),
    // a·cos + b·sin = A·cos(ωn + φ) with φ = atan2(−b, a).
    phaseRad: Math.atan2(-b, a),
    offset,
    residualRms: Math.sqrt(residual / samples.length),
    iterations,
  };
}

/** Three-parameter fit at a known frequency (IEEE 1241, the known-frequency fit). */
export function fitSine3(samples: ArrayLike<number>, sampleRateHz: number, frequencyHz: number): SineFit {
  const omega = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const [a, b, offset] = solveNormalEquations(samples, omega, null);
  return describe(samples, omega, a, b, offset, sampleRateHz, 1);
}

/**
 * Four-parameter fit (IEEE 1241): starting from a frequency estimate good to a fraction of a
 * cycle over the record, linearise in the frequency step and iterate until it stops moving.
 */
export function fitSine4(samples: ArrayLike<number>, sampleRateHz: number, initialFrequencyHz: number, maxIterations = 20): SineFit {
  let omega = (2 * Math.PI * initialFrequencyHz) / sampleRateHz;
  let [a, b, offset] = solveNormalEquations(samples, omega, null);
  let iterations = 0;
  while (iterations < maxIterations) {
    iterations++;
    const [na, nb, nOffset, scaledStep] = solveNormalEquations(samples, omega, { a, b });
    const deltaOmega = scaledStep / samples.length;
    a = na;
    b = nb;
    offset = nOffset;
    omega += deltaOmega;
    // Stop when the step moves the phase at the record's end by less than a nanoradian.
    if (Math.abs(deltaOmega) * samples.length < 1e-9) break;
  }
  [a, b, offset] = solveNormalEquations(samples, omega, null);
  return describe(samples, omega, a, b, offset, sampleRateHz, iterations);
}
