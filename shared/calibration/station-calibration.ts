// A station's level calibration as stored and shown, and whether it still holds for the audio
// setup in use. This is decision logic (a procedure that requires a calibration refuses to start a
// unit without a valid one), so the page and main both call calibrationStatus from here.

import type { ChainCheckJudgement, ChainCheckResult } from './chain-check.ts';

/** What a calibration was made with: any change of it makes the calibration void. */
export interface AudioSetup {
  inputDeviceId: string;
  inputDeviceLabel: string;
  /** 0-based channel of the input that carries the unit (its channel 1). */
  inputChannel: number;
  /**
   * 0-based channel of the input that carries a two-channel unit's channel 2, or null (absent in
   * setups stored before two channels were read). Not part of what voids the calibration: the
   * second input has a figure of its own (`Calibration.secondInput`) or none.
   */
  secondInputChannel?: number | null;
  outputDeviceId: string;
  outputDeviceLabel: string;
  sampleRateHz: number;
}

/** How the output's level was found: a true-RMS voltmeter on the output terminals. */
export interface OutputCalibration {
  dbuAtFullScale: number;
  referenceHz: number;
  referenceDbfs: number;
  /** The voltmeter reading as typed ("1.228 V"). */
  meterEntry: string;
}

export type InputCalibration =
  | { method: 'loopback'; dbuAtFullScale: number; generatorDbfs: number; capturedDbfs: number; capturedHz: number }
  | { method: 'stated'; dbuAtFullScale: number; statedEntry: string };

/** The second capture input, calibrated by the same loopback as the first (the output's reference tone). */
export interface SecondInputCalibration {
  /** 0-based capture input channel. */
  channel: number;
  dbuAtFullScale: number;
  generatorDbfs: number;
  capturedDbfs: number;
  capturedHz: number;
}

export interface Calibration {
  id: number;
  madeAt: string;
  operator: string;
  station: string;
  setup: AudioSetup;
  output: OutputCalibration;
  input: InputCalibration;
  /** The input carrying a two-channel unit's channel 2; null (or absent in older records) when not calibrated. */
  secondInput?: SecondInputCalibration | null;
}

export interface ChainCheckRecord {
  id: number;
  calibrationId: number;
  operator: string;
  result: ChainCheckResult;
  judgement: ChainCheckJudgement;
}

/** What a run names of the calibration it was measured with (the sheet prints it). */
export interface CalibrationUsed {
  id: number;
  madeAt: string;
  operator: string;
  expiresAt: string;
  inputDbuAtFullScale: number;
  outputDbuAtFullScale: number;
  /** The second input's figure and its capture channel; null (or absent) when the calibration has none. */
  secondInput?: { channel: number; dbuAtFullScale: number } | null;
  /** The chain's residual THD at the frequency nearest the trim's, and its noise floor; null without a chain check. */
  chainFloor: { residualThdDb: number | null; residualAtHz: number | null; noiseAWeightedDbu: number | null; checkedAt: string; pass: boolean } | null;
}

/** Common practice on small lines: a station re-calibrated monthly (invented default; the line sets its own). */
export const DEFAULT_CALIBRATION_EXPIRY_DAYS = 30;

export type CalibrationState = 'none' | 'valid' | 'expired' | 'setup-changed';

export interface CalibrationStatus {
  state: CalibrationState;
  /** When it stops holding (ISO 8601), or null without a calibration. */
  expiresAt: string | null;
  /** For the technician: what is the case and what to do. */
  message: string;
}

export function calibrationExpiresAt(madeAt: string, expiryDays: number): string {
  return new Date(Date.parse(madeAt) + expiryDays * 86_400_000).toISOString();
}

/** Which parts of the setup differ, in words ("the input device, the sample rate"); empty when none. */
export function setupChanges(made: AudioSetup, now: AudioSetup): string[] {
  const changes: string[] = [];
  if (made.inputDeviceId !== now.inputDeviceId) changes.push(`the input device (calibrated with “${made.inputDeviceLabel}”)`);
  if (made.inputChannel !== now.inputChannel) changes.push(`the input channel (calibrated on ${made.inputChannel + 1})`);
  if (made.outputDeviceId !== now.outputDeviceId) changes.push(`the output device (calibrated with “${made.outputDeviceLabel}”)`);
  if (made.sampleRateHz !== now.sampleRateHz) changes.push(`the sample rate (calibrated at ${made.sampleRateHz} Hz)`);
  return changes;
}

/**
 * Whether the station's latest calibration holds for the setup in use now. A setup of null (no
 * capture running) is judged on age alone.
 */
export function calibrationStatus(
  calibration: Pick<Calibration, 'madeAt' | 'setup'> | null,
  setup: AudioSetup | null,
  now: Date,
  expiryDays: number,
): CalibrationStatus {
  if (!calibration) {
    return { state: 'none', expiresAt: null, message: 'This station is not calibrated: levels are in dBFS only. Calibrate it in Station settings.' };
  }
  const expiresAt = calibrationExpiresAt(calibration.madeAt, expiryDays);
  if (now.getTime() >= Date.parse(expiresAt)) {
    return {
      state: 'expired',
      expiresAt,
      message: `The station's calibration expired on ${expiresAt.slice(0, 10)}. Calibrate it again in Station settings.`,
    };
  }
  const changes = setup ? setupChanges(calibration.setup, setup) : [];
  if (changes.length > 0) {
    return {
      state: 'setup-changed',
      expiresAt,
      message: `The calibration does not hold: ${changes.join(', ')} changed since. Go back to that setup, or calibrate again in Station settings.`,
    };
  }
  return { state: 'valid', expiresAt, message: `Calibrated ${calibration.madeAt.slice(0, 10)}, valid until ${expiresAt.slice(0, 10)}.` };
}

/**
 * The dBu at 0 dBFS of the capture input that reads the unit's channel (1 or 2), or null when that
 * input has no figure: channel 1 is read on the calibrated input itself (the setup check makes sure
 * of it); channel 2 only on the second input the calibration measured, and only if the setup still
 * routes channel 2 through it.
 */
export function inputDbuAtFullScaleFor(
  unitChannel: number,
  used: Pick<CalibrationUsed, 'inputDbuAtFullScale' | 'secondInput'> | null,
  setup: Pick<AudioSetup, 'secondInputChannel'> | null,
): number | null {
  if (!used) return null;
  if (unitChannel === 1) return used.inputDbuAtFullScale;
  const second = used.secondInput ?? null;
  if (unitChannel === 2 && second !== null && setup !== null && setup.secondInputChannel === second.channel) return second.dbuAtFullScale;
  return null;
}

/** How close to the chain's own residual a reading's THD may come before it is flagged at-floor (common practice: within 6 dB the chain contributes at least a quarter of the power). */
export const AT_FLOOR_MARGIN_DB = 6;

/** The chain's residual THD nearest a frequency (on a log scale), or null without residuals. */
export function residualNear(result: Pick<ChainCheckResult, 'residuals'>, frequencyHz: number): { frequencyHz: number; thdDb: number } | null {
  let best: { frequencyHz: number; thdDb: number } | null = null;
  for (const residual of result.residuals) {
    if (!best || Math.abs(Math.log(residual.frequencyHz / frequencyHz)) < Math.abs(Math.log(best.frequencyHz / frequencyHz))) {
      best = { frequencyHz: residual.frequencyHz, thdDb: residual.thdDb };
    }
  }
  return best;
}

/** Whether a reading's THD is within the margin of the chain's own residual: it may be the station, not the unit. */
export function isAtChainFloor(thdDb: number, residualThdDb: number, marginDb = AT_FLOOR_MARGIN_DB): boolean {
  return thdDb <= residualThdDb + marginDb;
}
