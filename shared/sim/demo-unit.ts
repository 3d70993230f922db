// The demo bench: a simulated transformer-coupled output stage with a virtual compensation
// trimmer, so the whole trim can be practised (and tested) with no interface. Every parameter is
// invented for the demo scenario (design §9) and describes no real product.
//
// The circuit: a driver with a voltage gain and a little third-harmonic distortion drives the
// primary through its own source resistance, the primary winding resistance and a coupling
// capacitor (with a damping resistor across it). The primary is the magnetising inductance, whose current rises with the cube of the
// flux near saturation, in parallel with the reflected load. The compensation trimmer feeds the
// loop current back positively into the driver: a negative source resistance R_c(p). With the net
// resistance R = R0 − R_c(p), the magnetising current's third harmonic develops −R·i₃ across the
// primary, so H3 is proportional to R, sign included, and nulls where R = 0. Past the null R < 0
// eats into the damping of the sub-audio resonance of magnetising inductance and coupling
// capacitor: sub-audio noise rises, and once R is more negative than the damping network can
// absorb, the stage oscillates slowly between the driver's rails. Driven hard, the driver's
// voltage stage swings softly into its supply past a knee well above the working level, so the
// stage has a maximum output level where its THD+N rises steeply (the max-level check's subject).

import { GaussianNoise, mulberry32 } from '../dsp/seeded-noise.ts';
import { SineSource, type StimulusSetting } from '../dsp/sine-source.ts';

export interface DemoUnitParameters {
  /** Driver output volts for a full-scale input. */
  driveVoltsPerFullScale: number;
  /** The driver's own voltage gain relative to nominal (its gain-setting resistors): 1 on a unit built to value. */
  driverGain: number;
  driverRailVolts: number;
  /**
   * The driver's voltage stage swings softly into its supply: exactly linear up to the knee, then
   * knee + span·tanh((|v| − knee)/span) toward the swing limit (span = limit − knee), so THD+N
   * rises steeply past a known level while the working level (a few volts) is untouched.
   */
  driverKneeVolts: number;
  driverSwingVolts: number;
  /** Driver third-harmonic coefficient on the normalised input: x + d₂·x² − d₃·x³. */
  driverCubic: number;
  /** Driver second-order coefficient (an asymmetric output stage): zero on a unit built to value. */
  driverSquare: number;
  /** Driver output noise, volts RMS over the full band. */
  driverNoiseVolts: number;
  windingOhms: number;
  sourceOhms: number;
  compensationOhmsPerTurn: number;
  magnetizingHenries: number;
  /** Magnetising current = ψ/L + k₃·ψ³ (amps per weber³). */
  saturationAmpsPerWb3: number;
  couplingFarads: number;
  /** Resistor across the coupling capacitor: damps the sub-audio resonance, barely touches H3. */
  couplingDampingOhms: number;
  reflectedLoadOhms: number;
  /** Converter noise at the capture input, as a fraction of full scale RMS. */
  inputNoiseFullScale: number;
  /** Mains hum at the output, dBFS, and its frequency. */
  humDbfs: number;
  mainsHz: number;
  /**
   * The output stage far above the audio band: the transformer's leakage inductance with its
   * winding capacitance and the damping network across the secondary make a second-order low-pass
   * (natural frequency and damping ratio), the ringing a scope shows after a square wave's edge.
   * It moves 20 kHz by a few hundredths of a dB, so the audio path (render) leaves it out; the scope records
   * (demo-scope.ts) show it.
   */
  hfNaturalHz: number;
  hfDampingRatio: number;
}

/** Invented values for the invented "MG-20" (design §9). */
export const DEMO_UNIT_PARAMETERS: DemoUnitParameters = {
  driveVoltsPerFullScale: 10,
  driverGain: 1,
  driverRailVolts: 14,
  driverKneeVolts: 6,
  driverSwingVolts: 11,
  driverCubic: 2e-3,
  driverSquare: 0,
  driverNoiseVolts: 3e-5,
  windingOhms: 120,
  sourceOhms: 10,
  compensationOhmsPerTurn: 26,
  magnetizingHenries: 5,
  saturationAmpsPerWb3: 34,
  couplingFarads: 1000e-6,
  couplingDampingOhms: 300,
  reflectedLoadOhms: 10000,
  inputNoiseFullScale: 2e-7,
  humDbfs: -105,
  mainsHz: 50,
  hfNaturalHz: 300_000,
  hfDampingRatio: 0.5,
};

/** The trimmer position where the net resistance R0 − R_c(p) is zero, from the parameters alone. */
export function nullTurnsOf(p: Pick<DemoUnitParameters, 'windingOhms' | 'sourceOhms' | 'compensationOhmsPerTurn'>): number {
  return (p.windingOhms + p.sourceOhms) / p.compensationOhmsPerTurn;
}

/** The driver's voltage stage: linear to the knee, then a tanh into its swing limit (C¹ at the knee). */
export function driverSwing(volts: number, p: Pick<DemoUnitParameters, 'driverKneeVolts' | 'driverSwingVolts'>): number {
  const magnitude = Math.abs(volts);
  if (magnitude <= p.driverKneeVolts) return volts;
  const span = p.driverSwingVolts - p.driverKneeVolts;
  return Math.sign(volts) * (p.driverKneeVolts + span * Math.tanh((magnitude - p.driverKneeVolts) / span));
}

export class DemoUnit {
  readonly sampleRateHz: number;
  readonly parameters: DemoUnitParameters;
  private readonly stimulus: SineSource;
  private readonly stimulusBlock = new Float32Array(128);
  private trimmerTurns = 0;
  private trimmerTarget = 0;
  private flux = 0;
  private capacitorVolts = 0;
  private humPhase = 0;
  private readonly noise: GaussianNoise;
  /** Samples the driver spent at a rail: zero until the stage breaks into oscillation. */
  railSamples = 0;

  constructor(sampleRateHz: number, parameters: DemoUnitParameters = DEMO_UNIT_PARAMETERS, seed = 1) {
    this.sampleRateHz = sampleRateHz;
    this.parameters = parameters;
    this.stimulus = new SineSource(sampleRateHz);
    this.noise = new GaussianNoise(mulberry32(seed));
  }

  /** Where the null lies: net resistance zero (first order; within 0.02 turns of the deepest H3). */
  get trueNullTurns(): number {
    return nullTurnsOf(this.parameters);
  }

  get netResistanceOhms(): number {
    const p = this.parameters;
    return p.windingOhms + p.sourceOhms - p.compensationOhmsPerTurn * this.trimmerTurns;
  }

  get trimmer(): number {
    return this.trimmerTurns;
  }

  /** How fast the virtual trimmer turns, turns per second (invented: a brisk hand on a trim tool). */
  static readonly TURNS_PER_SECOND = 2;

  /**
   * Turns the virtual trimmer; like a screwdriver it gets there at a finite rate, not in one jump.
   * Returns the seconds the move takes from here.
   */
  setTrimmer(turns: number): number {
    this.trimmerTarget = turns;
    return Math.abs(turns - this.trimmerTurns) / DemoUnit.TURNS_PER_SECOND;
  }

  setStimulus(setting: StimulusSetting): void {
    this.stimulus.set(setting);
  }

  /** A stimulus played once on top of the tone (a sweep): the stage answers it as it answers any drive. */
  private once: Float32Array | null = null;
  private onceAt = 0;

  /** Plays `samples` once from the next sample on; null stops what is playing at once. */
  playOnce(samples: Float32Array | null): void {
    this.once = samples;
    this.onceAt = 0;
  }

  /** Fills out[0..frames) with the captured output (full scale = the drive for a full-scale input). */
  render(out: Float32Array, frames = out.length): void {
    for (let done = 0; done < frames; ) {
      const chunk = Math.min(this.stimulusBlock.length, frames - done);
      this.stimulus.fill(this.stimulusBlock, chunk);
      const once = this.once;
      if (once) {
        const n = Math.min(chunk, once.length - this.onceAt);
        for (let i = 0; i < n; i++) this.stimulusBlock[i] += once[this.onceAt + i];
        this.onceAt += n;
        if (this.onceAt >= once.length) this.once = null;
      }
      for (let i = 0; i < chunk; i++) out[done + i] = this.step(this.stimulusBlock[i]);
      done += chunk;
    }
  }

  private step(x: number): number {
    const p = this.parameters;
    const dt = 1 / this.sampleRateHz;
    if (this.trimmerTurns !== this.trimmerTarget) {
      const stepTurns = DemoUnit.TURNS_PER_SECOND * dt;
      const remaining = this.trimmerTarget - this.trimmerTurns;
      this.trimmerTurns = Math.abs(remaining) <= stepTurns ? this.trimmerTarget : this.trimmerTurns + Math.sign(remaining) * stepTurns;
    }
    const drive = driverSwing(p.driverGain * p.driveVoltsPerFullScale * (x + p.driverSquare * x * x - p.driverCubic * x * x * x), p) + p.driverNoiseVolts * this.noise.next();
    // Classic fourth-order Runge-Kutta on (flux, capacitor volts); the drive is held over the step.
    const psi = this.flux;
    const vc = this.capacitorVolts;
    const [k1p, k1c] = this.derivatives(psi, vc, drive);
    const [k2p, k2c] = this.derivatives(psi + 0.5 * dt * k1p, vc + 0.5 * dt * k1c, drive);
    const [k3p, k3c] = this.derivatives(psi + 0.5 * dt * k2p, vc + 0.5 * dt * k2c, drive);
    const [k4p, k4c] = this.derivatives(psi + dt * k3p, vc + dt * k3c, drive);
    this.atRail = false;
    this.flux = psi + (dt / 6) * (k1p + 2 * k2p + 2 * k3p + k4p);
    this.capacitorVolts = vc + (dt / 6) * (k1c + 2 * k2c + 2 * k3c + k4c);
    const primaryVolts = this.derivatives(this.flux, this.capacitorVolts, drive)[0];
    if (this.atRail) this.railSamples++;

    this.humPhase += p.mainsHz / this.sampleRateHz;
    if (this.humPhase >= 1) this.humPhase -= 1;
    const hum = 10 ** (p.humDbfs / 20) * Math.sin(2 * Math.PI * this.humPhase);
    return primaryVolts / p.driveVoltsPerFullScale + hum + p.inputNoiseFullScale * this.noise.next();
  }

  private atRail = false;
  // Scratch for derivatives(): the primary volts (dψ/dt) and dv_C/dt.
  private readonly rates: [number, number] = [0, 0];

  /**
   * The loop: drive + R_c·i = (R_w + R_s)·i + v_C + v_p, with i = i_m(ψ) + v_p/R_L and the
   * driver's output held within its rails. Returns [dψ/dt, dv_C/dt].
   */
  private derivatives(psi: number, vc: number, drive: number): [number, number] {
    const p = this.parameters;
    const r0 = p.windingOhms + p.sourceOhms;
    const rc = p.compensationOhmsPerTurn * this.trimmerTurns;
    const magnetizing = psi / p.magnetizingHenries + p.saturationAmpsPerWb3 * psi * psi * psi;
    let primary = (drive - vc - (r0 - rc) * magnetizing) / (1 + (r0 - rc) / p.reflectedLoadOhms);
    const driverOut = drive + rc * (magnetizing + primary / p.reflectedLoadOhms);
    if (Math.abs(driverOut) > p.driverRailVolts) {
      this.atRail = true;
      // Driver at its rail: the feedback no longer adds; solve the loop with the rail as the source.
      const rail = Math.sign(driverOut) * p.driverRailVolts;
      primary = (rail - vc - r0 * magnetizing) / (1 + r0 / p.reflectedLoadOhms);
    }
    this.rates[0] = primary;
    this.rates[1] = (magnetizing + primary / p.reflectedLoadOhms - vc / p.couplingDampingOhms) / p.couplingFarads;
    return this.rates;
  }

}
