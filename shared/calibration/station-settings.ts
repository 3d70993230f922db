// A station's own settings: its name, the mains it runs on, the audio setup it starts with, how
// long a calibration holds and the limits of its chain check. Stored by main in a versioned file
// in the data folder; the page edits them in the station settings view.

import { DEFAULT_CHAIN_LIMITS, type ChainLimits } from './chain-check.ts';
import { DEFAULT_CALIBRATION_EXPIRY_DAYS, type AudioSetup } from './station-calibration.ts';

export interface StationSettings {
  stationName: string;
  mainsHz: 50 | 60;
  defaultAudio: AudioSetup | null;
  calibrationExpiryDays: number;
  chainLimits: ChainLimits;
}

export function defaultStationSettings(stationName: string): StationSettings {
  return {
    stationName,
    mainsHz: 50,
    defaultAudio: null,
    calibrationExpiryDays: DEFAULT_CALIBRATION_EXPIRY_DAYS,
    chainLimits: DEFAULT_CHAIN_LIMITS,
  };
}
