// The lowest noise floor a real chain can have: the thermal (Johnson–Nyquist) noise of the
// resistance that drives its input, v = √(4kTRB). A calibrated chain floor below it cannot be a
// measurement; it means the input calibration (or the band) is wrong.

import { dbuFromVrms, signedFixed } from '../levels.ts';

/** Boltzmann constant, J/K: exact since the 2019 redefinition of the SI. */
export const BOLTZMANN_J_PER_K = 1.380649e-23;

/** The usual figures for a noise floor's plausibility: a 150 Ω source (a typical microphone or line output) at 290 K (IEEE standard noise temperature) over 20 Hz–20 kHz. */
export const THERMAL_NOISE_DEFAULTS = { sourceOhms: 150, temperatureK: 290, bandwidthHz: 20000 - 20 } as const;

/** RMS open-circuit noise voltage of a resistor, V. */
export function johnsonNoiseVrms(resistanceOhms: number, temperatureK: number, bandwidthHz: number): number {
  return Math.sqrt(4 * BOLTZMANN_J_PER_K * temperatureK * resistanceOhms * bandwidthHz);
}

export function johnsonNoiseDbu(resistanceOhms: number, temperatureK: number, bandwidthHz: number): number {
  return dbuFromVrms(johnsonNoiseVrms(resistanceOhms, temperatureK, bandwidthHz));
}

export type FloorCheck = { ok: true; thermalDbu: number } | { ok: false; thermalDbu: number; message: string };

/**
 * Refuses an unweighted chain floor (dBu over `bandwidthHz`) below the thermal noise of its
 * source resistance: no amplifier or converter adds negative noise.
 */
export function checkChainFloorDbu(floorDbu: number, options: Partial<typeof THERMAL_NOISE_DEFAULTS> = {}): FloorCheck {
  const { sourceOhms, temperatureK, bandwidthHz } = { ...THERMAL_NOISE_DEFAULTS, ...options };
  const thermalDbu = johnsonNoiseDbu(sourceOhms, temperatureK, bandwidthHz);
  if (floorDbu >= thermalDbu) return { ok: true, thermalDbu };
  return {
    ok: false,
    thermalDbu,
    message:
      `A chain floor of ${signedFixed(floorDbu, 1)} dBu is below the thermal noise of a ${sourceOhms} Ω source ` +
      `(${signedFixed(thermalDbu, 1)} dBu over ${(bandwidthHz / 1000).toFixed(1)} kHz), which no real chain can beat; check the input calibration.`,
  };
}
