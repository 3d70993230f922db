// The trim model (design §5). The residual harmonic is roughly proportional to the net series
// resistance left in the primary circuit, sign included, plus a fixed vector from everything else:
// as a phasor, Hn(p) ≈ A + B·p. Its magnitude is a V with a rounded bottom, its phase turns by
// about 180° through the null. With phases a straight-line complex fit finds the null from two
// points; without usable phases the magnitude alone is fitted as |Hn| = √((s·(p − p0))² + f²).

import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { ComplexSolver } from '../dsp/complex-solve.ts';

export interface TrimObservation {
  /** Trimmer position; larger means more compensation. The first observation is the safe end. */
  position: number;
  /** The trimmed harmonic's level relative to the fundamental, dBc. */
  levelDbc: number;
  /** Its phase φn − n·φ1 in degrees, when known. */
  phaseDeg: number | null;
}

export interface TrimFitOptions {
  /** Relative uncertainty of one reading's harmonic amplitude (0.03 ≈ ±0.25 dB). */
  relativeUncertainty: number;
  /** Absolute floor of that uncertainty, dBc (noise and the chain's own distortion). */
  floorDbc: number;
  /** Reduced χ² above which the phases are taken as inconsistent with a straight line. */
  phaseConsistencyChi2: number;
  /** A point whose normalised residual exceeds this is a candidate outlier (4 or more points). */
  outlierSigma: number;
}

export const DEFAULT_TRIM_FIT_OPTIONS: TrimFitOptions = {
  relativeUncertainty: 0.03,
  floorDbc: -100,
  phaseConsistencyChi2: 25,
  outlierSigma: 4,
};

export type TrimModelKind = 'phasor' | 'magnitude';

export interface TrimFit {
  model: TrimModelKind;
  /** Why this model was used. */
  reason: string;
  nullPosition: number;
  /**
   * The null position's 95 % interval half-width: the stated reading uncertainty's 1.96 σ, or the
   * scatter's Student-t interval when the points scatter more than stated, whichever is wider.
   */
  nullPositionPlusMinus: number;
  /** Predicted harmonic level at the null, dBc. */
  nullLevelDbc: number;
  /** Slope of the harmonic amplitude away from the null, per unit of position (linear ratio). */
  slopePerPosition: number;
  /** The slope over its own standard error: below about 3 the trimmer shows no clear effect. */
  slopeSignificance: number;
  /** χ² per degree of freedom of the fit (0 when nothing is left over to judge it). */
  reducedChi2: number;
  /** Index of a point left out as an outlier, or null. */
  excludedPoint: number | null;
  /** Predicted level at a position, dBc. */
  predictDbc(position: number): number;
}

export class TrimFitError extends Error {
  override name = 'TrimFitError';
}

const amplitude = (levelDbc: number) => 10 ** (levelDbc / 20);

/** Two-sided 95 % Student-t quantiles t(0.975, ν) for ν = 1..10 (any statistics table). */
const STUDENT_T_975 = [Infinity, 12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228];

/** The stated reading uncertainty counts as an estimate from this many degrees of freedom. */
const STATED_UNCERTAINTY_DOF = 4;

/**
 * Half-width of a 95 % interval for a parameter whose standard error is `sigma` from the stated
 * reading uncertainty. The stated uncertainty and the fit's own scatter are pooled, the stated one
 * weighted as if it came from STATED_UNCERTAINTY_DOF degrees of freedom (a scaled inverse-χ²
 * prior), and Student's t for the pooled degrees of freedom gives the width: with few points the
 * scatter says little and the interval widens; points scattering more than stated widen it too.
 */
function interval95(sigma: number, reducedChi2: number, dof: number): number {
  const pooledDof = STATED_UNCERTAINTY_DOF + Math.max(0, dof);
  const scale = (STATED_UNCERTAINTY_DOF + Math.max(0, dof) * reducedChi2) / pooledDof;
  const t = pooledDof < STUDENT_T_975.length ? STUDENT_T_975[pooledDof] : 1.96 + 2.4 / pooledDof;
  return sigma * t * Math.sqrt(Math.max(1, scale));
}

const toDb = (ratio: number) => 20 * Math.log10(Math.max(ratio, 1e-15));

/** Fits the trim curve; chooses the phasor model when every point has a consistent phase. */
export function fitTrimCurve(observations: readonly TrimObservation[], options: Partial<TrimFitOptions> = {}): TrimFit {
  const settings = { ...DEFAULT_TRIM_FIT_OPTIONS, ...options };
  if (observations.length < 2) throw new TrimFitError(`the trim fit needs at least two points; there ${observations.length === 1 ? 'is one' : 'are none'}`);
  const positions = new Set(observations.map((o) => o.position));
  if (positions.size < 2) throw new TrimFitError('the trim fit needs points at two different positions');

  const withPhase = observations.every((o) => o.phaseDeg !== null && Number.isFinite(o.phaseDeg));
  let phasorProblem = 'some points have no phase';
  if (withPhase) {
    const phasor = robust(observations, (subset) => fitPhasor(subset, settings), settings);
    if (phasor.reducedChi2 <= settings.phaseConsistencyChi2 || observations.length < 3) {
      return { ...phasor.fit, reason: phasor.fit.reason };
    }
    phasorProblem = `the phases do not lie on a straight line (reduced χ² ${phasor.reducedChi2.toFixed(1)})`;
  }
  if (observations.length < 3) {
    throw new TrimFitError(`with two points the fit needs their phases, and ${phasorProblem}; record a third point`);
  }
  const magnitude = robust(observations, (subset) => fitMagnitude(subset, settings), settings);
  if (magnitude.reducedChi2 > settings.phaseConsistencyChi2) {
    throw new TrimFitError(
      `the readings do not follow one trim curve (${withPhase ? 'neither the phases nor the levels fit' : 'the levels do not fit'}, reduced χ² ${magnitude.reducedChi2.toFixed(0)}): check that each point was recorded with the trimmer still and the reading settled, and that the unit is stable`,
    );
  }
  return { ...magnitude.fit, reason: `magnitude model: ${phasorProblem}` };
}

interface FitAttempt {
  fit: TrimFit;
  /** Normalised residual of each point of the subset fitted. */
  residuals: number[];
  reducedChi2: number;
}

/** Fits all points; with four or more, refits without the worst one when it is a clear outlier. */
function robust(observations: readonly TrimObservation[], fit: (subset: readonly TrimObservation[]) => FitAttempt, settings: TrimFitOptions): FitAttempt {
  const all = fit(observations);
  if (observations.length < 4) return all;
  let worst = 0;
  for (let i = 1; i < all.residuals.length; i++) if (all.residuals[i] > all.residuals[worst]) worst = i;
  if (all.residuals[worst] < settings.outlierSigma) return all;
  const rest = observations.filter((_, i) => i !== worst);
  if (new Set(rest.map((o) => o.position)).size < 2) return all;
  const without = fit(rest);
  if (Math.max(...without.residuals) >= settings.outlierSigma) return all; // not one bad point: keep everything
  return { ...without, fit: { ...without.fit, excludedPoint: worst, reason: `${without.fit.reason}; point ${worst + 1} left out as an outlier` } };
}

function sigmaOf(o: TrimObservation, settings: TrimFitOptions): number {
  return settings.relativeUncertainty * amplitude(o.levelDbc) + amplitude(settings.floorDbc);
}

/** Weighted complex least squares of H(p) = A + B·p. */
function fitPhasor(observations: readonly TrimObservation[], settings: TrimFitOptions): FitAttempt {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let t0Re = 0;
  let t0Im = 0;
  let t1Re = 0;
  let t1Im = 0;
  const points = observations.map((o) => {
    const radians = ((o.phaseDeg ?? 0) * Math.PI) / 180;
    const a = amplitude(o.levelDbc);
    const sigma = sigmaOf(o, settings);
    const w = 1 / (sigma * sigma);
    return { p: o.position, re: a * Math.cos(radians), im: a * Math.sin(radians), sigma, w };
  });
  for (const { p, re, im, w } of points) {
    s0 += w;
    s1 += w * p;
    s2 += w * p * p;
    t0Re += w * re;
    t0Im += w * im;
    t1Re += w * p * re;
    t1Im += w * p * im;
  }
  const det = s0 * s2 - s1 * s1;
  const aRe = (s2 * t0Re - s1 * t1Re) / det;
  const aIm = (s2 * t0Im - s1 * t1Im) / det;
  const bRe = (s0 * t1Re - s1 * t0Re) / det;
  const bIm = (s0 * t1Im - s1 * t0Im) / det;

  const residuals = points.map(({ p, re, im, sigma }) => Math.hypot(re - aRe - bRe * p, im - aIm - bIm * p) / sigma);
  const chi2 = residuals.reduce((sum, r) => sum + r * r, 0);
  // Two real equations per point, four real unknowns.
  const dof = 2 * points.length - 4;
  const reducedChi2 = dof > 0 ? chi2 / dof : 0;

  const slope2 = bRe * bRe + bIm * bIm;
  if (slope2 === 0) throw new TrimFitError('The readings barely change with the trimmer: check the trimmer is in circuit and the right channel is captured.');
  const n = aRe * bRe + aIm * bIm;
  const nullPosition = -n / slope2;
  const depth = Math.sqrt(Math.max(0, aRe * aRe + aIm * aIm - (n * n) / slope2));

  // Propagate the parameter covariance (σ²-weighted, scaled up by the scatter when it exceeds the
  // stated uncertainty) to the null position. Re and Im parts share the matrix [[s2,−s1],[−s1,s0]]/det.
  const cAA = s2 / det;
  const cAB = -s1 / det;
  const cBB = s0 / det;
  const dAr = -bRe / slope2;
  const dAi = -bIm / slope2;
  const dBr = -(aRe * slope2 - n * 2 * bRe) / (slope2 * slope2);
  const dBi = -(aIm * slope2 - n * 2 * bIm) / (slope2 * slope2);
  const variance = dAr * dAr * cAA + 2 * dAr * dBr * cAB + dBr * dBr * cBB + dAi * dAi * cAA + 2 * dAi * dBi * cAB + dBi * dBi * cBB;

  const slope = Math.sqrt(slope2);
  const scatter = Math.max(1, reducedChi2);
  return {
    residuals,
    reducedChi2,
    fit: {
      model: 'phasor',
      reason: 'phasor model: every point has a phase and they lie on a straight line',
      nullPosition,
      nullPositionPlusMinus: interval95(Math.sqrt(Math.max(0, variance)), reducedChi2, dof),
      nullLevelDbc: toDb(depth),
      slopePerPosition: slope,
      // |B|²/σ² per component is χ² with two degrees of freedom when the trimmer has no effect.
      slopeSignificance: slope / Math.sqrt(cBB * scatter),
      reducedChi2,
      excludedPoint: null,
      predictDbc: (position) => toDb(Math.hypot(aRe + bRe * position, aIm + bIm * position)),
    },
  };
}

const solver = new ComplexSolver(3);

/** Nonlinear least squares of |H(p)| = √((s·(p − p0))² + f²) (Levenberg-Marquardt, ml-levenberg-marquardt). */
function fitMagnitude(observations: readonly TrimObservation[], settings: TrimFitOptions): FitAttempt {
  const positions = observations.map((o) => o.position);
  const magnitudes = observations.map((o) => amplitude(o.levelDbc));
  const sigmas = observations.map((o) => sigmaOf(o, settings));
  const model = (s: number, p0: number, f: number, p: number) => Math.sqrt((s * (p - p0)) ** 2 + f * f);

  let lowest = 0;
  for (let i = 1; i < magnitudes.length; i++) if (magnitudes[i] < magnitudes[lowest]) lowest = i;
  const span = Math.max(...positions) - Math.min(...positions);
  const highest = Math.max(...magnitudes);
  const initial = [highest / Math.max(span, 1e-9), positions[lowest], magnitudes[lowest] / 2];

  // Fit in units of each point's uncertainty: x is the point index, y its normalised magnitude.
  const normalisedY = magnitudes.map((m, i) => m / sigmas[i]);
  const result = levenbergMarquardt(
    { x: positions.map((_, i) => i), y: normalisedY },
    ([s, p0, f]) => (i) => model(s, p0, f, positions[i]) / sigmas[i],
    {
      initialValues: initial,
      minValues: [0, Math.min(...positions) - 2 * span - 1, 0],
      maxValues: [100 * initial[0] + 1, Math.max(...positions) + 2 * span + 1, highest],
      maxIterations: 400,
      errorTolerance: 1e-12,
      damping: 1e-3,
      gradientDifference: [initial[0] * 1e-6 + 1e-12, span * 1e-6 + 1e-9, highest * 1e-6 + 1e-15],
      centralDifference: true,
    },
  );
  const [s, p0, f] = result.parameterValues;
  const residuals = positions.map((p, i) => Math.abs(magnitudes[i] - model(s, p0, f, p)) / sigmas[i]);
  const chi2 = residuals.reduce((sum, r) => sum + r * r, 0);
  const dof = positions.length - 3;
  const reducedChi2 = dof > 0 ? chi2 / dof : 0;
  if (!(s > 0)) throw new TrimFitError('The readings barely change with the trimmer: check the trimmer is in circuit and the right channel is captured.');

  // Covariance of the parameters from the Jacobian of the normalised model at the solution.
  const jacobian = positions.map((p, i) => {
    const r = model(s, p0, f, p) || 1e-300;
    return [(s * (p - p0) ** 2) / r / sigmas[i], (-s * s * (p - p0)) / r / sigmas[i], f / r / sigmas[i]];
  });
  const size = 3;
  solver.gRe.fill(0);
  solver.gIm.fill(0);
  solver.bRe.fill(0);
  solver.bIm.fill(0);
  for (const row of jacobian) for (let a = 0; a < size; a++) for (let b = 0; b < size; b++) solver.gRe[a * solver.capacity + b] += row[a] * row[b];
  solver.bRe[1] = 1; // solve JᵀJ·x = e_p0: x[1] is var(p0) before scaling
  const variance = solver.solve(size) ? solver.bRe[1] : Infinity;
  solver.gRe.fill(0);
  solver.gIm.fill(0);
  solver.bRe.fill(0);
  solver.bIm.fill(0);
  for (const row of jacobian) for (let a = 0; a < size; a++) for (let b = 0; b < size; b++) solver.gRe[a * solver.capacity + b] += row[a] * row[b];
  solver.bRe[0] = 1; // x[0] is var(s)
  const slopeVariance = solver.solve(size) ? solver.bRe[0] * Math.max(1, reducedChi2) : Infinity;

  return {
    residuals,
    reducedChi2,
    fit: {
      model: 'magnitude',
      reason: 'magnitude model',
      nullPosition: p0,
      nullPositionPlusMinus: interval95(Math.sqrt(Math.max(0, variance)), reducedChi2, dof),
      nullLevelDbc: toDb(f),
      slopePerPosition: s,
      slopeSignificance: s / Math.sqrt(Math.max(slopeVariance, 1e-300)),
      reducedChi2,
      excludedPoint: null,
      predictDbc: (position) => toDb(model(s, p0, f, position)),
    },
  };
}
