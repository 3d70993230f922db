// Level and ratio conversions used everywhere a number is shown or stored.
// 0 dBFS is the level of a full-scale sine (peak 1.0), the AES17 convention, so a
// sine's dBFS comes from its peak amplitude, not its RMS.

import { FLOOR_DB } from './measurement/reading.ts';

export const dbFromRatio = (ratio: number): number => Math.max(FLOOR_DB, 20 * Math.log10(ratio));
export const ratioFromDb = (db: number): number => 10 ** (db / 20);
export const dbfsFromPeak = (peakAmplitude: number): number => dbFromRatio(peakAmplitude);
export const peakFromDbfs = (levelDbfs: number): number => ratioFromDb(levelDbfs);

/** Wraps an angle in degrees to (−180, 180]. */
export function wrapDegrees(deg: number): number {
  const wrapped = deg - 360 * Math.floor((deg + 180) / 360);
  return wrapped === -180 ? 180 : wrapped;
}

/** 0 dBu is the voltage that dissipates 1 mW in 600 Ω: √0.6 V RMS ≈ 0.7746 V. */
export const DBU_REFERENCE_VRMS = Math.sqrt(0.6);

/** A station's level calibration: the analogue level (dBu) that reads 0 dBFS on this channel. */
export interface LevelCalibration {
  dbuAtFullScale: number;
}

export interface AnalogueLevel {
  dbu: number;
  dbv: number;
  vRms: number;
}

export function analogueLevel(levelDbfs: number, calibration: LevelCalibration): AnalogueLevel {
  const dbu = levelDbfs + calibration.dbuAtFullScale;
  const vRms = DBU_REFERENCE_VRMS * 10 ** (dbu / 20);
  return { dbu, dbv: 20 * Math.log10(vRms), vRms };
}
