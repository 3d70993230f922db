// The demo line's station side: opens the station in the data folder exactly as the app does,
// imports the demo procedure file, calibrates the demo bench if it has no calibration that holds,
// runs the chain check on the demo loopback when a response step needs the station's own response
// taken out, gives each simulated unit a free serial, and sends every call through main's own
// dispatcher (the same validation the page's calls get). A ringing step's scope record is saved as
// DIR/scope/<serial>.csv and chosen in main's file dialog, as a technician saves and picks it. The
// walk itself is shared/procedures/demo-line.ts.

import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { dispatch, type CallerContext } from '../electron/services/handlers.ts';
import { openStation } from '../electron/services/station.ts';
import { calibrationStatus, type AudioSetup } from '../shared/calibration/station-calibration.ts';
import type { IpcChannel } from '../shared/ipc/channels.ts';
import type { IpcRequest, IpcResponse } from '../shared/ipc/contract.ts';
import { demoCalibrationRequest, demoChainCheckRequest, LineCallRefused, lineUnitReport, walkUnit, type LineUnitReport } from '../shared/procedures/demo-line.ts';
import { demoBatch } from '../shared/sim/demo-batch.ts';

export const DEMO_PROCEDURE_FILE = fileURLToPath(new URL('../resources/procedures/mg20-lf-trim.json', import.meta.url));
const DEMO_PROCEDURE_CODE = 'MG20-LF-TRIM';
const OPERATOR = 'Scripted technician';
const STATION_NAME = 'demo-line';
/** The demo bench as the station's audio setup (the app's demo input runs at 48 kHz). */
const SETUP: AudioSetup = {
  inputDeviceId: 'demo-bench',
  inputDeviceLabel: 'Demo bench (simulated unit)',
  inputChannel: 0,
  outputDeviceId: 'demo-bench',
  outputDeviceLabel: 'Demo bench (simulated unit)',
  sampleRateHz: 48000,
};
/** The last four digits of a serial count the units of a batch: 0001 to 9999. */
const LAST_SERIAL_NUMBER = 9999;

export interface DemoLineReport {
  units: LineUnitReport[];
  passed: number;
  failed: number;
}

/** A problem the person running the line can act on (a folder that cannot be used, serials used up). */
export class DemoLineProblem extends Error {}

export async function runDemoLine(options: {
  units: number;
  dataDir: string;
  seed: number;
  now?: () => Date;
  onUnitDone?: (done: number, total: number) => void;
}): Promise<DemoLineReport> {
  const station = openStation({ dataDir: options.dataDir, stationName: STATION_NAME, now: options.now });
  try {
    const problem = station.recordsProblem();
    if (problem !== null) throw new DemoLineProblem(problem);
    // The scope record saved last: what the technician picks in main's dialog for the ringing step.
    let scopePath: string | null = null;
    const caller: CallerContext = {
      printToPdf: async () => {
        throw new DemoLineProblem('The demo line prints no sheets.');
      },
      print: async () => false,
      chooseProcedureFile: async () => DEMO_PROCEDURE_FILE,
      chooseScopeCapture: async () => scopePath,
    };
    const scopeDir = join(options.dataDir, 'scope');
    const scopeFile = (serial: string, text: string) => {
      mkdirSync(scopeDir, { recursive: true });
      scopePath = join(scopeDir, `${serial}.csv`);
      writeFileSync(scopePath, text);
    };
    const call = async <C extends IpcChannel>(channel: C, request: IpcRequest<C>): Promise<IpcResponse<C>> => {
      const result = await dispatch(station.handlers, channel, request, caller, station.errorLog);
      if (!result.ok) throw new LineCallRefused(channel, result.error.message);
      return result.value as IpcResponse<C>;
    };

    await call('importProcedure', {});
    const procedure = (await call('listProcedures', {})).find((p) => p.definition.code === DEMO_PROCEDURE_CODE);
    if (!procedure) throw new DemoLineProblem(`${DEMO_PROCEDURE_CODE} is not in the station's procedures after importing ${DEMO_PROCEDURE_FILE}.`);

    let { calibration, settings, chainCheck } = await call('getStationCalibration', {});
    const holds = calibration && calibrationStatus(calibration, SETUP, options.now?.() ?? new Date(), settings.calibrationExpiryDays).state === 'valid';
    if (!holds) {
      calibration = (await call('recordCalibration', demoCalibrationRequest(SETUP, OPERATOR))).calibration;
      chainCheck = null;
    }
    if (!calibration) throw new DemoLineProblem('The demo bench could not be calibrated.');
    // A response step is corrected by the chain's own response, and refused without it where the
    // procedure requires calibration: the technician runs the chain check with its stepped sine first.
    const current = (await call('listProcedureRevisions', {})).find((r) => r.id === procedure.id);
    const sweeps = current?.file.steps.some((s) => s.kind === 'response') ?? false;
    if (sweeps && !chainCheck?.result.response) {
      await call('recordChainCheck', demoChainCheckRequest(SETUP, calibration.id, OPERATOR, settings.mainsHz, options.now?.() ?? new Date()));
    }
    const stationLine = {
      sampleRateHz: SETUP.sampleRateHz,
      mainsHz: settings.mainsHz,
      levels: { outputDbuAtFullScale: calibration.output.dbuAtFullScale, inputDbuAtFullScale: calibration.input.dbuAtFullScale },
      setup: SETUP,
      scopeFile,
    };

    const serials = await freeSerials(options.units, (options.now?.() ?? new Date()), (serial) => call('lookUpUnit', { serial }), options.dataDir);
    const lot = `Demo line, seed ${options.seed}`;
    const reports: LineUnitReport[] = [];
    for (const unit of demoBatch(options.units, options.seed)) {
      const serial = serials[unit.index];
      const opened = await call('openRun', { serial, procedureId: procedure.id, operator: OPERATOR, setup: SETUP, lot });
      let finished;
      try {
        finished = await walkUnit(unit, opened, call, stationLine);
      } catch (error) {
        if (error instanceof LineCallRefused) throw new DemoLineProblem(`${serial}: ${error.message}`);
        throw error;
      }
      reports.push(lineUnitReport(unit, finished));
      options.onUnitDone?.(reports.length, options.units);
    }
    const passed = reports.filter((r) => r.verdict === 'pass').length;
    return { units: reports, passed, failed: reports.length - passed };
  } finally {
    station.close();
  }
}

/**
 * `count` serials no unit in the folder has yet, numbered on from the highest taken under this
 * month's prefix (the example's MG20-YYMM-NNNN), so running the line again never reuses one.
 */
async function freeSerials(count: number, now: Date, lookUp: (serial: string) => Promise<unknown>, dataDir: string): Promise<string[]> {
  const prefix = `MG20-${String(now.getUTCFullYear() % 100).padStart(2, '0')}${String(now.getUTCMonth() + 1).padStart(2, '0')}-`;
  const serial = (n: number) => `${prefix}${String(n).padStart(4, '0')}`;
  const taken = async (n: number) => (await lookUp(serial(n))) !== null;
  // Earlier runs of the line took serials from 0001 upward, so halving finds where they end;
  // a serial taken by hand further on is stepped over below.
  let low = 1;
  let high = LAST_SERIAL_NUMBER + 1;
  while (low < high) {
    const middle = Math.floor((low + high) / 2);
    if (await taken(middle)) low = middle + 1;
    else high = middle;
  }
  const free: string[] = [];
  for (let n = low; free.length < count && n <= LAST_SERIAL_NUMBER; n++) if (!(await taken(n))) free.push(serial(n));
  if (free.length < count) {
    throw new DemoLineProblem(
      `${dataDir} has only ${free.length} free serial${free.length === 1 ? '' : 's'} under ${prefix}NNNN this month, and ${count} were asked for: use another data folder, or fewer units.`,
    );
  }
  return free;
}
