// A seeded batch of invented MG-20 units for the headless demo line: each unit's component values
// spread about the demo unit's nominal ones (shared/sim/demo-unit.ts) as parts from a real
// production lot would, and a few units built wrong on purpose so the line has something to
// catch. Everything here is invented for the demo scenario; no real product or part is described.
//
// The spreads are the tolerances parts are commonly bought to (common practice, from memory):
// inductance ±10 %, aluminium electrolytic capacitors ±20 %, metal-film resistors ±5 %, trimmer
// tracks ±20 %, winding resistance ±10 %. A part's value is taken as normal about nominal with
// the tolerance at three standard deviations, cut off at the tolerance (a part outside it is
// rejected at goods-in). Driver distortion, noise and hum vary as ratios: log-normal spreads.
// Every sixth defective unit (the defects taken in turn) is the one caught only by the ringing
// step, so a batch of 30 meets each defect once.

import { GaussianNoise, mulberry32 } from '../dsp/seeded-noise.ts';
import { DEMO_UNIT_PARAMETERS, nullTurnsOf, type DemoUnitParameters } from './demo-unit.ts';

/** What was built wrong on a unit made out of limits on purpose, and the step that must catch it. */
export interface BatchDefect {
  /** The procedure step (mg20-lf-trim.json) whose limits the unit breaks. */
  stepId: string;
  /** What is wrong with the unit, in words. */
  what: string;
}

export interface BatchUnit {
  /** 0-based place in the batch. */
  index: number;
  parameters: DemoUnitParameters;
  /** Seed of the unit's own noise. */
  noiseSeed: number;
  /** Where the net resistance R0 − R_c(p) is zero, from the parameters (demo-unit.ts); beyond the trimmer's end on a unit with the wrong trimmer. */
  trueNullTurns: number;
  /** Null on a unit built to within its tolerances. */
  defect: BatchDefect | null;
}

/**
 * The ways a unit is built wrong on purpose, each caught by one step of the demo procedure. Each
 * is far enough outside the invented limits that the unit's ordinary spread cannot hide it.
 */
export const BATCH_DEFECTS: readonly { defect: BatchDefect; apply: (p: DemoUnitParameters) => DemoUnitParameters }[] = [
  {
    // A trimmer of less than half the value: even fully turned it cancels too little resistance,
    // so the null lies past the trimmer's end and the trim cannot be done.
    defect: { stepId: 'lf-trim', what: 'compensation trimmer of the wrong value: the null lies beyond its end' },
    apply: (p) => ({ ...p, compensationOhmsPerTurn: (p.windingOhms + p.sourceOhms) / 11.5 }),
  },
  {
    // A driver with mismatched output devices: an even-order term x + d₂·x², whose second
    // harmonic is d₂·A/2 of the fundamental at peak A (Fourier series of x²). At 1 kHz and +4 dBu
    // (A ≈ 0.2) that is about −67 dB, over that step's limit; the trim counts it in its THD at
    // −12 dBFS, where it stays under the trim's limit, so the trim still passes.
    defect: { stepId: 'thd-1khz', what: 'driver with an even-order distortion far above its design (mismatched output devices)' },
    apply: (p) => ({ ...p, driverSquare: 4.5e-3 }),
  },
  {
    // A gain-setting resistor of the wrong value: about 1.5 dB low.
    defect: { stepId: 'gain-1khz', what: 'driver gain about 1.5 dB low (wrong gain-setting resistor)' },
    apply: (p) => ({ ...p, driverGain: 10 ** (-1.5 / 20) }),
  },
  {
    // A noisy driver: 20 dB more noise.
    defect: { stepId: 'noise-a', what: 'driver noise 20 dB above its design' },
    apply: (p) => ({ ...p, driverNoiseVolts: p.driverNoiseVolts * 10 }),
  },
  {
    // A badly dressed mains lead: hum 15 dB up.
    defect: { stepId: 'hum', what: 'mains hum 15 dB above its design (a badly dressed mains lead)' },
    apply: (p) => ({ ...p, humDbfs: p.humDbfs + 15 }),
  },
  {
    // The damping network across the secondary left off: the leakage resonance rings with a damping
    // ratio of 0.15, an overshoot of exp(−ζπ/√(1−ζ²)) ≈ 62 % (the textbook second-order result).
    defect: { stepId: 'ringing-20k', what: 'damping network across the secondary missing: the output rings far too long after an edge' },
    apply: (p) => ({ ...p, hfDampingRatio: 0.15 }),
  },
];

/** Every this-many-th unit of a batch is built wrong, the defects taken in turn (unit 4, 9, 14, …). */
export const DEFECT_EVERY = 5;

export function demoBatch(count: number, seed: number): BatchUnit[] {
  const uniform = mulberry32(seed);
  const normal = new GaussianNoise(mulberry32(seed ^ 0x5bd1e995));
  /** A part of ±`tolerance` (fraction): normal with the tolerance at 3σ, cut off at the tolerance. */
  const part = (nominal: number, tolerance: number) => nominal * (1 + Math.max(-1, Math.min(1, normal.next() / 3)) * tolerance);
  /** A ratio spread log-normally: `spreadDb` is one standard deviation, in dB. */
  const spreadDb = (nominal: number, spread: number) => nominal * 10 ** ((spread * normal.next()) / 20);
  // The high-frequency parts draw from their own sequence, so every other value of a seed's batch
  // stays what it was before they were added.
  const hfNormal = new GaussianNoise(mulberry32(seed ^ 0x2c1b3c6d));
  const hfPart = (nominal: number, tolerance: number) => nominal * (1 + Math.max(-1, Math.min(1, hfNormal.next() / 3)) * tolerance);
  const n = DEMO_UNIT_PARAMETERS;
  const units: BatchUnit[] = [];
  for (let index = 0; index < count; index++) {
    const built: DemoUnitParameters = {
      ...n,
      driverGain: part(n.driverGain, 0.02), // two ±1 % resistors set it
      driverCubic: spreadDb(n.driverCubic, 3),
      driverNoiseVolts: spreadDb(n.driverNoiseVolts, 1),
      windingOhms: part(n.windingOhms, 0.1),
      sourceOhms: part(n.sourceOhms, 0.05),
      compensationOhmsPerTurn: part(n.compensationOhmsPerTurn, 0.2),
      magnetizingHenries: part(n.magnetizingHenries, 0.1),
      // The core's saturation follows its permeability, which spreads wider than the inductance it sets.
      saturationAmpsPerWb3: part(n.saturationAmpsPerWb3, 0.25),
      couplingFarads: part(n.couplingFarads, 0.2),
      couplingDampingOhms: part(n.couplingDampingOhms, 0.05),
      reflectedLoadOhms: part(n.reflectedLoadOhms, 0.05),
      humDbfs: n.humDbfs + 1.5 * normal.next(),
      // Invented spreads: the leakage inductance and winding capacitance set the natural frequency
      // (±15 % between windings), the damping network and the load's tolerance its damping (±10 %).
      hfNaturalHz: hfPart(n.hfNaturalHz, 0.15),
      hfDampingRatio: hfPart(n.hfDampingRatio, 0.1),
    };
    const wrong = index % DEFECT_EVERY === DEFECT_EVERY - 1 ? BATCH_DEFECTS[Math.floor(index / DEFECT_EVERY) % BATCH_DEFECTS.length] : null;
    const parameters = wrong ? wrong.apply(built) : built;
    units.push({
      index,
      parameters,
      noiseSeed: Math.floor(uniform() * 2 ** 32),
      trueNullTurns: nullTurnsOf(parameters),
      defect: wrong?.defect ?? null,
    });
  }
  return units;
}
