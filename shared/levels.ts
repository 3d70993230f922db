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
  const vRms = vRmsFromDbu(dbu);
  return { dbu, dbv: 20 * Math.log10(vRms), vRms };
}

/** 0 dBV is 1 V RMS, so 0 dBV = 20·log10(1/√0.6) ≈ +2.218 dBu. */
export const DBV_IN_DBU = -20 * Math.log10(DBU_REFERENCE_VRMS);

export const dbuFromVrms = (vRms: number): number => 20 * Math.log10(vRms / DBU_REFERENCE_VRMS);
export const vRmsFromDbu = (dbu: number): number => DBU_REFERENCE_VRMS * 10 ** (dbu / 20);
export const dbuFromDbv = (dbv: number): number => dbv + DBV_IN_DBU;
export const dbvFromDbu = (dbu: number): number => dbu - DBV_IN_DBU;

/**
 * A dBFS figure (a level, or a noise figure referred to a full-scale sine as AES17 does) in dBu on a
 * calibrated channel. FLOOR_DB stays FLOOR_DB: it stands for "nothing measured", not a level.
 */
export function dbuFromDbfs(levelDbfs: number, calibration: LevelCalibration): number {
  return levelDbfs <= FLOOR_DB ? FLOOR_DB : levelDbfs + calibration.dbuAtFullScale;
}

/** A signed figure with a true minus sign (U+2212), as the readout and the sheet print it. */
export function signedFixed(value: number, decimals: number): string {
  const text = Math.abs(value).toFixed(decimals);
  // −0.0 and a value that rounds to zero get no sign.
  if (Number(text) === 0) return text;
  return `${value < 0 ? '−' : '+'}${text}`;
}

/** "−12.0 dBFS (+6.0 dBu)" on a calibrated channel, "−12.0 dBFS" without a calibration. */
export function formatLevel(levelDbfs: number, calibration: LevelCalibration | null, decimals = 1): string {
  const dbfs = `${signedFixed(levelDbfs, decimals)} dBFS`;
  if (!calibration) return dbfs;
  return `${dbfs} (${signedFixed(dbuFromDbfs(levelDbfs, calibration), decimals)} dBu)`;
}
