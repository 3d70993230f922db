// The station's settings file in the data folder: versioned, replaced whole (written, flushed,
// renamed), the previous version copied into backups/ first, and refused when a newer Trimbench
// wrote it. A missing file means the defaults; a damaged one is reported, never guessed at.

import { closeSync, copyFileSync, existsSync, fsyncSync, mkdirSync, openSync, readdirSync, readFileSync, renameSync, unlinkSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { defaultStationSettings, type StationSettings } from '../../shared/calibration/station-settings.ts';
import { stationSettingsSchema } from '../../shared/ipc/calibration-schemas.ts';
import { BACKUPS_FOLDER } from './backups.ts';
import { ExpectedFailure } from './expected-failure.ts';
import { fsyncFolder } from './sheets.ts';

export const SETTINGS_FILE = 'station-settings.json';
/** Marks the file as ours; `version` is the shape of `settings`. */
const FORMAT = 'trimbench-station-settings';
export const SETTINGS_VERSION = 1;
/** Earlier versions of the file kept in backups/: enough to undo a week of changes. */
const SETTINGS_BACKUPS_KEPT = 20;

export interface StationSettingsStore {
  readonly path: string;
  get(): StationSettings;
  save(next: StationSettings): StationSettings;
}

export function openStationSettings(dataDir: string, hostName: string, now: () => Date = () => new Date()): StationSettingsStore {
  const path = join(dataDir, SETTINGS_FILE);
  let current = read(path, hostName);
  return {
    path,
    get: () => current,
    save(next) {
      const checked = stationSettingsSchema.parse(next);
      if (existsSync(path)) {
        read(path, hostName); // a newer or damaged file is refused, not overwritten
        const folder = join(dataDir, BACKUPS_FOLDER);
        mkdirSync(folder, { recursive: true });
        copyFileSync(path, join(folder, `station-settings-${now().toISOString().replaceAll(':', '-')}.json`));
        const old = readdirSync(folder).filter((name) => name.startsWith('station-settings-')).sort();
        for (const name of old.slice(0, Math.max(0, old.length - SETTINGS_BACKUPS_KEPT))) unlinkSync(join(folder, name));
      }
      writeWhole(path, `${JSON.stringify({ format: FORMAT, version: SETTINGS_VERSION, settings: checked }, null, 2)}\n`);
      current = checked;
      return current;
    },
  };
}

function read(path: string, hostName: string): StationSettings {
  if (!existsSync(path)) return defaultStationSettings(hostName);
  let parsed: { format?: unknown; version?: unknown; settings?: unknown };
  try {
    parsed = JSON.parse(readFileSync(path, 'utf8'));
  } catch {
    throw new ExpectedFailure(`The station settings file ${path} is damaged. Restore it from the backups folder beside it, or delete it to start from the defaults.`);
  }
  if (parsed?.format !== FORMAT || !Number.isInteger(parsed.version)) {
    throw new ExpectedFailure(`${path} is not a Trimbench station settings file. Move it aside, then start Trimbench again.`);
  }
  if ((parsed.version as number) > SETTINGS_VERSION) {
    throw new ExpectedFailure(
      `The station settings file ${path} was written by a newer Trimbench (version ${parsed.version as number}). Update Trimbench; the file was not changed.`,
    );
  }
  const checked = stationSettingsSchema.safeParse(parsed.settings);
  if (!checked.success) {
    const issue = checked.error.issues[0];
    throw new ExpectedFailure(
      `The station settings file ${path} holds a wrong value at ${issue.path.join('.') || 'settings'}: ${issue.message} Correct it or restore it from the backups folder.`,
    );
  }
  return checked.data;
}

/** Written to a temporary name, flushed, renamed over the old file and the folder flushed: never half a file. */
function writeWhole(path: string, text: string): void {
  const partial = `${path}.partial`;
  const fd = openSync(partial, 'w');
  try {
    writeSync(fd, text);
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  renameSync(partial, path);
  fsyncFolder(join(path, '..'));
}
