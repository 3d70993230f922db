import { useMemo } from 'react';
import type { StationCalibration } from '../../shared/ipc/contract.ts';
import { calibrationStatus, residualNear, type AudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { LevelCalibration } from '../../shared/levels.ts';

/**
 * Levels in dBu, and the chain's floor for the at-floor flag, only while the calibration holds for
 * the setup in use; its chain check counts only when it was made with that calibration.
 */
export function useCalibrationInUse(stationCalibration: StationCalibration | null, setup: AudioSetup | null, stimulusHz: number) {
  const status = stationCalibration
    ? calibrationStatus(stationCalibration.calibration, setup, new Date(), stationCalibration.settings.calibrationExpiryDays)
    : null;
  const inUse = status?.state === 'valid' ? (stationCalibration?.calibration ?? null) : null;
  const inputCalibration = useMemo<LevelCalibration | null>(() => (inUse ? { dbuAtFullScale: inUse.input.dbuAtFullScale } : null), [inUse]);
  const outputCalibration = useMemo<LevelCalibration | null>(() => (inUse ? { dbuAtFullScale: inUse.output.dbuAtFullScale } : null), [inUse]);
  const chainCheck = inUse && stationCalibration?.chainCheck?.calibrationId === inUse.id ? stationCalibration.chainCheck : null;
  const chainFloorThdDb = chainCheck ? (residualNear(chainCheck.result, stimulusHz)?.thdDb ?? null) : null;
  return { status, inputCalibration, outputCalibration, chainFloorThdDb };
}
