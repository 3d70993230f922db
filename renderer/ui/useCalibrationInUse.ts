import { useMemo } from 'react';
import type { StationCalibration } from '../../shared/ipc/contract.ts';
import { calibrationStatus, inputDbuAtFullScaleFor, residualNear, type AudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { LevelCalibration } from '../../shared/levels.ts';
import type { StationLevels } from '../../shared/procedures/check-steps.ts';

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
  const secondInputChannel = setup?.secondInputChannel ?? null;
  const levels = useMemo<StationLevels | null>(
    () =>
      inUse
        ? {
            inputDbuAtFullScale: inUse.input.dbuAtFullScale,
            outputDbuAtFullScale: inUse.output.dbuAtFullScale,
            secondInputDbuAtFullScale: inputDbuAtFullScaleFor(2, { inputDbuAtFullScale: inUse.input.dbuAtFullScale, secondInput: inUse.secondInput }, { secondInputChannel }),
          }
        : null,
    [inUse, secondInputChannel],
  );
  const chainCheck = inUse && stationCalibration?.chainCheck?.calibrationId === inUse.id ? stationCalibration.chainCheck : null;
  const chainFloorThdDb = chainCheck ? (residualNear(chainCheck.result, stimulusHz)?.thdDb ?? null) : null;
  return { status, inputCalibration, outputCalibration, levels, chainFloorThdDb };
}
