// The process the kill -9 loop (tests/support/soak.ts) kills: a station on the data folder given,
// doing what a technician's page does through the IPC dispatcher (open a unit, record trim points,
// finish the run, save its sheet) for as long as it lives. Each write is printed only after the
// call has returned, i.e. after its transaction committed: those lines are what "confirmed" means.
//
//   node tests/support/soak-child.ts DATA_DIR INCARNATION SEED

import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { openStation } from '../../electron/services/station.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { seededRandom } from './random.ts';
import { readingWithThd } from './station.ts';
import { soakSerial, soakSheetPdf } from './soak.ts';

const [dataDir, incarnationText, seedText] = process.argv.slice(2);
if (!dataDir || !incarnationText || !seedText) {
  process.stderr.write('usage: soak-child.ts DATA_DIR INCARNATION SEED\n');
  process.exit(2);
}
const incarnation = Number(incarnationText);
const random = seededRandom(Number(seedText));
const STIMULUS = { on: true, frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, levelDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs };

// Writes to a pipe are synchronous on Linux (Node docs, "A note on process I/O"), so a line the
// parent has read was printed after the commit it reports, never before.
const say = (line: string) => process.stdout.write(`${line}\n`);

async function call(station: ReturnType<typeof openStation>, channel: string, payload: unknown, caller: CallerContext) {
  const result = await dispatch(station.handlers, channel, payload, caller);
  if (!result.ok) throw new Error(`${channel} refused: ${result.error.message}`);
  return result.value as never;
}

async function main() {
  const station = openStation({ dataDir, stationName: `soak-${incarnation}` });
  const procedureId = station.records.listProcedures()[0].id;
  say('ready');
  for (let runIndex = 1; ; runIndex++) {
    const serial = soakSerial(incarnation, runIndex);
    const caller: CallerContext = {
      printToPdf: async () => soakSheetPdf(serial),
      print: async () => false,
      chooseProcedureFile: async () => null,
    };
    const opened: { run: { id: number } } = await call(station, 'openRun', { serial, procedureId, operator: 'Soak Tester' }, caller);
    const runId = opened.run.id;
    // Safety first: main records no trim point before the notice is acknowledged.
    await call(station, 'acknowledgeNotice', { runId, stepId: 'safety' }, caller);
    const points = 2 + Math.floor(random() * 7);
    for (let k = 0; k < points; k++) {
      // Distinct positions inside the demo's 0–10 turns; THD a plausible trim's -40…-75 dB.
      const position = k * 1.25;
      const thdDb = -40 - Math.round(random() * 35);
      const recorded: { point: { sequence: number } } = await call(
        station,
        'recordTrimPoint',
        { runId, position, reading: readingWithThd(thdDb), live: null, stimulus: STIMULUS },
        caller,
      );
      say(`point ${runId} ${recorded.point.sequence} ${position} ${thdDb}`);
    }
    const finished: { run: { verdict: string } } = await call(station, 'finishRun', { runId, asFailure: true }, caller);
    say(`finish ${runId} ${finished.run.verdict}`);
    const saved: { path: string } = await call(station, 'saveSheetPdf', { runId }, caller);
    say(`sheet ${runId} ${serial} ${saved.path}`);
  }
}

main().catch((error: unknown) => {
  process.stderr.write(`soak child failed: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}\n`);
  process.exit(1);
});
