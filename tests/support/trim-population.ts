// A simulated population of units and technicians for the trim assistant. Each hidden unit is the
// phasor model of design §5, H(p) = A + B·p, built so that its true null and depth are known by
// construction; readings carry realistic noise. The technician (shared/trim/scripted-technician.ts)
// starts at the safe end and types the assistant's nextPosition each time until a recommendation
// exists and holds still.

import { nextMove } from '../../shared/trim/scripted-technician.ts';
import { adviseTrim, type TrimAssistantOptions, type TrimPointData } from '../../shared/trim/trim-assistant.ts';
import { gaussian, seededRandom } from './random.ts';

export interface PopulationOptions {
  units: number;
  seed: number;
  /** Relative amplitude noise of one reading (standard deviation). */
  relativeNoise: number;
  /** Phase noise of one reading, degrees (standard deviation). */
  phaseNoiseDeg: number;
  /** Absolute noise floor, dBc (RMS of the complex noise added to the harmonic). */
  floorDbc: number;
  /** Range of true null depths, dBc. */
  depthDbc: [number, number];
  /** The technician gives up after this many points. */
  pointCap: number;
  assistant: Partial<TrimAssistantOptions>;
}

export const POPULATION_DEFAULTS: PopulationOptions = {
  units: 400,
  seed: 20611,
  relativeNoise: 0.03,
  phaseNoiseDeg: 1.5,
  floorDbc: -100,
  // A well-trimmed null in such a stage reaches about −65 to −70 dB (references.md, common
  // practice); the population goes from just inside the −60 dBc limit to 14 dB above the floor.
  depthDbc: [-86, -62],
  pointCap: 14,
  assistant: { positionMin: 0, positionMax: 10, positionStep: 0.25, limitDbc: -60, marginDb: 1 },
};

export interface UnitOutcome {
  trueNull: number;
  trueDepthDbc: number;
  /** Every recommendation shown along the way. */
  recommendations: number[];
  /** The recommendation that held still, and after how many points; null when none did within the cap. */
  final: number | null;
  pointsUsed: number;
  /** True level at the final recommendation minus the true depth, dB. */
  finalExcessDb: number | null;
  fitProblems: number;
}

export interface PopulationFigures {
  units: number;
  recommendationsShown: number;
  pastNull: number;
  /** Smallest (true null − recommendation) over every recommendation shown, turns. */
  worstMargin: number;
  shareWithin8Points: number;
  medianPoints: number;
  shareWithin2Db: number;
  outcomes: UnitOutcome[];
}

const db = (ratio: number) => 20 * Math.log10(ratio);

export function simulatePopulation(overrides: Partial<PopulationOptions> = {}): PopulationFigures {
  const o = { ...POPULATION_DEFAULTS, ...overrides };
  const uniform = seededRandom(o.seed);
  const normal = gaussian(seededRandom(o.seed + 1));
  const between = (low: number, high: number) => low + (high - low) * uniform();
  const step = o.assistant.positionStep ?? 0.25;
  const floor = 10 ** (o.floorDbc / 20);
  const phaseNoise = (o.phaseNoiseDeg * Math.PI) / 180;
  const outcomes: UnitOutcome[] = [];

  for (let u = 0; u < o.units; u++) {
    // Construction: the null at p0 with depth d; the fixed residue stands at right angles to the
    // slope, so |H| is least, and equal to d, exactly at p0.
    const p0 = between(1.5, 9);
    const depth = 10 ** (between(o.depthDbc[0], o.depthDbc[1]) / 20);
    const safeEnd = 10 ** (between(-48, -32) / 20);
    const slope = Math.sqrt(safeEnd * safeEnd - depth * depth) / p0;
    const theta = between(0, 2 * Math.PI);
    const perpendicular = theta + (uniform() < 0.5 ? 1 : -1) * (Math.PI / 2);
    const truth = (p: number) => ({
      re: slope * (p - p0) * Math.cos(theta) + depth * Math.cos(perpendicular),
      im: slope * (p - p0) * Math.sin(theta) + depth * Math.sin(perpendicular),
    });
    const read = (p: number): TrimPointData => {
      const h = truth(p);
      const gain = 1 + o.relativeNoise * normal();
      const turn = phaseNoise * normal();
      const re = gain * (h.re * Math.cos(turn) - h.im * Math.sin(turn)) + (floor / Math.SQRT2) * normal();
      const im = gain * (h.re * Math.sin(turn) + h.im * Math.cos(turn)) + (floor / Math.SQRT2) * normal();
      return { position: p, levelDbc: db(Math.hypot(re, im)), phaseDeg: (Math.atan2(im, re) * 180) / Math.PI, gainDb: -12, lfDbfs: -110 };
    };

    const points: TrimPointData[] = [];
    const recommendations: number[] = [];
    let position = o.assistant.positionMin ?? 0;
    let previous: number | null = null;
    let final: number | null = null;
    let fitProblems = 0;
    for (;;) {
      points.push(read(position));
      const advice = adviseTrim(points, o.assistant);
      if (advice.fitProblem !== null) fitProblems++;
      if (advice.recommendedPosition !== null) recommendations.push(advice.recommendedPosition);
      const move = nextMove(advice, previous, points.length, { positionStep: step, pointCap: o.pointCap });
      if (move.kind === 'give-up') break;
      if (move.kind === 'leave-at') {
        final = move.position;
        break;
      }
      previous = advice.recommendedPosition;
      position = move.position;
    }
    const level = (p: number) => db(Math.hypot(truth(p).re, truth(p).im));
    outcomes.push({
      trueNull: p0,
      trueDepthDbc: db(depth),
      recommendations,
      final,
      pointsUsed: points.length,
      finalExcessDb: final === null ? null : level(final) - db(depth),
      fitProblems,
    });
  }

  const all = outcomes.flatMap((u) => u.recommendations.map((r) => u.trueNull - r));
  const points = outcomes.map((u) => (u.final === null ? Infinity : u.pointsUsed)).sort((a, b) => a - b);
  return {
    units: outcomes.length,
    recommendationsShown: all.length,
    pastNull: all.filter((margin) => margin < 0).length,
    worstMargin: Math.min(...all),
    shareWithin8Points: outcomes.filter((u) => u.final !== null && u.pointsUsed <= 8).length / outcomes.length,
    medianPoints: points[Math.floor(points.length / 2)],
    shareWithin2Db: outcomes.filter((u) => u.finalExcessDb !== null && u.finalExcessDb <= 2).length / outcomes.length,
    outcomes,
  };
}
