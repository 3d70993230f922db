import { useCallback, useEffect, useState } from 'react';
import type { Station, StationCalibration, StoredProcedure } from '../../shared/ipc/contract.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import { call } from '../api.ts';
import { problemText } from '../problem-text.ts';

/** The station, its procedures and its settings, calibration and chain check, as main holds them. */
export function useStation() {
  const [station, setStation] = useState<Station | null>(null);
  const [procedures, setProcedures] = useState<StoredProcedure[]>([]);
  const [stationCalibration, setStationCalibration] = useState<StationCalibration | null>(null);
  const [recordsProblem, setRecordsProblem] = useState<string | null>(null);

  const readCalibration = useCallback(
    () =>
      call('getStationCalibration', {}).then(setStationCalibration, (error: unknown) =>
        setRecordsProblem(problemText(error, 'The station settings could not be read', 'Correct or restore the settings file named, then restart Trimbench.')),
      ),
    [],
  );

  useEffect(() => {
    Promise.all([call('describeStation', {}), call('listProcedures', {})])
      .then(([stationInfo, list]) => {
        setStation(stationInfo);
        setProcedures(list);
      })
      .catch((error: unknown) =>
        setRecordsProblem(problemText(error, 'The station and its procedures could not be loaded', 'Restart Trimbench; if this stays, report it.')),
      );
    void readCalibration();
  }, [readCalibration]);

  const readProcedures = useCallback(
    () =>
      void call('listProcedures', {}).then(setProcedures, (error: unknown) =>
        setRecordsProblem(problemText(error, 'The procedures could not be read', 'Open the Station view again.')),
      ),
    [],
  );

  const saveSettings = useCallback(async (next: StationSettings) => {
    const saved = await call('saveStationSettings', next);
    setStationCalibration(saved);
    // A new name shows in the top bar at once (main reads it from the settings).
    setStation((current) => (current ? { ...current, stationName: saved.settings.stationName } : current));
    return saved;
  }, []);

  return {
    station,
    procedures,
    stationCalibration,
    setStationCalibration,
    recordsProblem: recordsProblem ?? station?.recordsProblem ?? null,
    readCalibration,
    readProcedures,
    saveSettings,
  };
}
