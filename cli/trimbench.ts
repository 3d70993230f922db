// The Trimbench command line: offline analysis of WAV files, test-frequency planning and trim-curve
// fitting, computed
// by the same shared/ code as the live app.
//
//   npm run -s cli -- analyze FILE.wav [--channel N] [--mains 50|60] [--harmonics N] [--band LO-HI] [--fundamental HZ] [--input-dbu-at-0dbfs X] [--json]
//   npm run -s cli -- plan --target HZ --rate HZ [--mains 50|60] [--harmonics N] [--max-offset HZ] [--json]
//   npm run -s cli -- fit FILE.csv [--margin-db X] [--step X] [--limit-dbc X] [--json]
//   npm run -s cli -- procedure check FILE.json
//   npm run -s cli -- sheet --data DIR --run N [--json]
//   npm run -s cli -- demo-line --units N --data DIR [--seed S] [--json]
//   npm run -s cli -- sweep --write OUT.wav --from HZ --to HZ --seconds S --rate HZ --level-dbfs L
//   npm run -s cli -- response CAPTURE.wav --from HZ --to HZ --seconds S --rate HZ --level-dbfs L [--reference-hz HZ] [--channel N] [--json]
//   npm run -s cli -- ringing FILE.csv [--channel N] [--json]

import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { dbuFromDbfs, type LevelCalibration } from '../shared/levels.ts';
import { DEFAULT_MAX_OFFSET_PERCENT, planTestFrequency } from '../shared/measurement/frequency-planner.ts';
import { checkProcedureFile } from '../shared/procedures/procedure-file.ts';
import { analyzeRecordSource, type RecordAnalysis } from '../shared/measurement/record-analysis.ts';
import { adviseTrim, DEFAULT_TRIM_ASSISTANT_OPTIONS, describeThermalMargin } from '../shared/trim/trim-assistant.ts';
import { parseTrimCsv, TrimCsvError } from '../shared/trim/trim-csv.ts';
import { buildSheetModel, type SheetModel } from '../shared/sheet/sheet-model.ts';
import { fileProblem, numberOption, openWavForCommand, refuseNonFinite, UsageProblem } from './cli-input.ts';
import { responseCommand, sweepCommand, SWEEP_COMMANDS_HELP, SWEEP_COMMANDS_USAGE } from './sweep-commands.ts';
import { createCalibrations } from '../electron/services/calibrations.ts';
import { openForReading, type Db } from '../electron/services/database.ts';
import { createRecords } from '../electron/services/records.ts';
import { sqliteRepository } from '../electron/services/records-repository.ts';
import { DATABASE_FILE } from '../electron/services/station.ts';
import { DemoLineProblem, runDemoLine, type DemoLineReport } from './demo-line.ts';
import { ExpectedFailure } from '../electron/services/expected-failure.ts';
import { LineCallRefused } from '../shared/procedures/demo-line.ts';
import { RINGING_USAGE, ringingCommand } from './ringing-command.ts';

// Wider than any audio interface's full scale (about −20 to +30 dBu), so a recording from an
// unusual chain can still be read; anything outside is a typing error.
const INPUT_DBU_RANGE = { min: -40, max: 40 } as const;

const USAGE = `usage:
  trimbench analyze FILE.wav [--channel N] [--mains 50|60] [--harmonics N] [--band LO-HI] [--fundamental HZ]
                            [--input-dbu-at-0dbfs X] [--json]
  trimbench plan --target HZ --rate HZ [--mains 50|60] [--harmonics N] [--max-offset HZ] [--json]
  trimbench fit FILE.csv [--margin-db X] [--step X] [--limit-dbc X] [--json]
  trimbench procedure check FILE.json
  trimbench sheet --data DIR --run N [--json]
  trimbench demo-line --units N --data DIR [--seed S] [--json]
${SWEEP_COMMANDS_USAGE}
  ${RINGING_USAGE.line}
  trimbench help

  analyze   offline analysis of a WAV recording (refuses non-finite samples); with
            --input-dbu-at-0dbfs X (the input's calibration: X dBu reads 0 dBFS, ${INPUT_DBU_RANGE.min} to ${INPUT_DBU_RANGE.max})
            levels and noise are also given in dBu
  plan      the whole-cycle test frequency nearest the target, clear of mains, at most
            --max-offset Hz from it (default ${DEFAULT_MAX_OFFSET_PERCENT} % of the target)
  fit       the trim assistant on a CSV of trim points
  procedure check
            validates a procedure file (docs/procedures.md): every problem on its own line,
            its JSON path first, or a one-line summary when the file is good
  sheet     what run N's unit sheet shows, read from the station database in the data folder DIR
            (opened for reading only: nothing in it is changed); --json prints the sheet model
  demo-line runs the demo procedure (invented MG-20) on N simulated units with a scripted
            technician and writes the runs into the station database in DIR; --seed S
            (a whole number, default 1) picks the batch
${SWEEP_COMMANDS_HELP}
${RINGING_USAGE.help}`;

/** Several problems with one file: printed one per line as they are, exit status 1. */
class FileProblems extends Error {
  readonly lines: string[];
  constructor(lines: string[]) {
    super(lines.join('\n'));
    this.lines = lines;
  }
}

function mainsOption(text: string | undefined): 50 | 60 {
  if (text === undefined) return 50;
  if (text !== '50' && text !== '60') throw new UsageProblem(`--mains must be 50 or 60, got “${text}”`);
  return Number(text) as 50 | 60;
}

function bandOption(text: string | undefined): [number, number] | undefined {
  if (text === undefined) return undefined;
  const match = /^\s*([0-9.]+)\s*-\s*([0-9.]+)\s*$/.exec(text);
  const low = match ? Number(match[1]) : NaN;
  const high = match ? Number(match[2]) : NaN;
  if (!match || !Number.isFinite(low) || !Number.isFinite(high) || low < 0 || high <= low) {
    throw new UsageProblem(`--band must be LO-HI in Hz with LO < HI, e.g. 20-20000, got “${text}”`);
  }
  return [low, high];
}

function analyze(args: string[]): string {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    strict: true,
    options: {
      channel: { type: 'string' },
      mains: { type: 'string' },
      harmonics: { type: 'string' },
      band: { type: 'string' },
      fundamental: { type: 'string' },
      'input-dbu-at-0dbfs': { type: 'string' },
      json: { type: 'boolean', default: false },
    },
  });
  if (positionals.length !== 1) throw new UsageProblem(`analyze takes one WAV file\n${USAGE}`);
  const file = positionals[0];
  const channel = numberOption('channel', values.channel, (v) => Number.isInteger(v) && v >= 0, 'a whole number ≥ 0') ?? 0;
  const mainsHz = mainsOption(values.mains);
  const harmonicCount = numberOption('harmonics', values.harmonics, (v) => Number.isInteger(v) && v >= 2 && v <= 50, 'a whole number from 2 to 50') ?? 10;
  const band = bandOption(values.band);
  const fundamentalHz = numberOption('fundamental', values.fundamental, (v) => v > 0, 'a frequency in Hz above 0') ?? null;
  const inputDbu = numberOption(
    'input-dbu-at-0dbfs',
    values['input-dbu-at-0dbfs'],
    (v) => v >= INPUT_DBU_RANGE.min && v <= INPUT_DBU_RANGE.max,
    `a level in dBu from ${INPUT_DBU_RANGE.min} to ${INPUT_DBU_RANGE.max}`,
  );
  const calibration: LevelCalibration | null = inputDbu === undefined ? null : { dbuAtFullScale: inputDbu };

  // The file is read in pieces (cli/wav-file.ts), never whole, so its size does not bound us.
  const wav = openWavForCommand(file);
  let result: RecordAnalysis;
  try {
    const { layout } = wav;
    if (channel >= layout.channelCount) throw new UsageProblem(`${file}: has ${layout.channelCount} channel(s); --channel ${channel} does not exist`);
    const nyquist = layout.sampleRateHz / 2;
    if (fundamentalHz !== null && fundamentalHz >= nyquist) throw new UsageProblem(`--fundamental must lie below Nyquist (${nyquist} Hz)`);
    result = analyzeRecordSource(wav.channel(channel), layout.sampleRateHz, {
      harmonicCount,
      mainsHz,
      bandLowHz: band?.[0],
      bandHighHz: band ? Math.min(band[1], nyquist) : Math.min(20000, nyquist),
      fundamentalHz,
    });
  } catch (error) {
    throw fileProblem(file, error);
  } finally {
    wav.close();
  }
  const json = analysisJson(file, channel, result, calibration);
  refuseNonFinite(file, json, 'check the recording holds the tone you meant to analyse');
  return values.json ? JSON.stringify(json) : analysisTable(file, channel, result, calibration);
}

function analysisJson(file: string, channel: number, r: RecordAnalysis, calibration: LevelCalibration | null) {
  // dBu figures only with a calibration: without one, a dBu field would be a guess.
  const dbu = (dbfs: number) => dbuFromDbfs(dbfs, calibration!);
  return {
    file,
    sampleRateHz: r.sampleRateHz,
    channel,
    fundamental: {
      frequencyHz: r.fundamental.frequencyHz,
      levelDbfs: r.fundamental.levelDbfs,
      ...(calibration ? { levelDbu: dbu(r.fundamental.levelDbfs) } : {}),
      phaseDeg: r.fundamental.phaseDeg,
    },
    harmonics: r.harmonics.map(({ order, frequencyHz, levelDbc, phaseDeg }) => ({ order, frequencyHz, levelDbc, phaseDeg })),
    harmonicsAboveNyquist: r.harmonicsAboveNyquist,
    thdPercent: r.thdPercent,
    thdDb: r.thdDb,
    thdnPercent: r.thdnPercent,
    thdnDb: r.thdnDb,
    sinadDb: r.sinadDb,
    enob: r.enob,
    noiseDbfs: r.noiseDbfs,
    noiseAWeightedDbfs: r.noiseAWeightedDbfs,
    ...(calibration ? { noiseDbu: dbu(r.noiseDbfs), noiseAWeightedDbu: dbu(r.noiseAWeightedDbfs) } : {}),
    hum: r.hum
      ? {
          frequencyHz: r.hum.frequencyHz,
          levelDbfs: r.hum.levelDbfs,
          ...(calibration ? { levelDbu: dbu(r.hum.levelDbfs) } : {}),
          components: r.hum.components,
        }
      : null,
    mainsCoincidentOrders: r.mainsCoincidentOrders,
    flags: r.flags,
  };
}

function analysisTable(file: string, channel: number, r: RecordAnalysis, calibration: LevelCalibration | null): string {
  const f = (value: number, decimals: number) => value.toFixed(decimals).padStart(9);
  // The dBu figure beside a dBFS one, when the input's calibration was given.
  const beside = (dbfs: number, decimals: number) => {
    if (!calibration) return '';
    const dbu = dbuFromDbfs(dbfs, calibration);
    return ` (${dbu > 0 ? '+' : ''}${dbu.toFixed(decimals)} dBu)`;
  };
  const lines = [
    `${file} — channel ${channel}, ${r.sampleRateHz} Hz, ${r.frames} frame(s) of ${r.frameSize}, ${r.mode}`,
    ...(calibration ? [`calibration   input ${calibration.dbuAtFullScale} dBu at 0 dBFS`] : []),
    `fundamental   ${r.fundamental.frequencyHz.toFixed(4)} Hz   ${r.fundamental.levelDbfs.toFixed(3)} dBFS${beside(r.fundamental.levelDbfs, 3)}   phase ${r.fundamental.phaseDeg.toFixed(2)}°`,
    `THD           ${r.thdPercent.toPrecision(4)} %   ${r.thdDb.toFixed(2)} dB`,
    `THD+N         ${r.thdnPercent.toPrecision(4)} %   ${r.thdnDb.toFixed(2)} dB   SINAD ${r.sinadDb.toFixed(2)} dB   ENOB ${r.enob.toFixed(2)}`,
    `noise         ${r.noiseDbfs.toFixed(2)} dBFS${beside(r.noiseDbfs, 2)}   A-weighted ${r.noiseAWeightedDbfs.toFixed(2)} dBFS${beside(r.noiseAWeightedDbfs, 2)}`,
    r.hum
      ? `hum           ${r.hum.frequencyHz.toFixed(3)} Hz ${r.hum.levelDbfs.toFixed(2)} dBFS${beside(r.hum.levelDbfs, 2)}; ${r.hum.components.map((c) => `×${c.order} ${c.levelDbfs.toFixed(1)}`).join(', ')} dBFS`
      : 'hum           none above the noise',
    '',
    'order   frequency Hz   level dBc   phase °',
    ...r.harmonics.map((h) => `H${String(h.order).padEnd(5)}${f(h.frequencyHz, 2).padStart(14)}${f(h.levelDbc, 2).padStart(12)}${f(h.phaseDeg, 1).padStart(10)}`),
  ];
  if (r.harmonicsAboveNyquist.length) lines.push(`left out (at or above Nyquist): ${r.harmonicsAboveNyquist.map((o) => `H${o}`).join(', ')}`);
  if (r.mainsCoincidentOrders.length) {
    lines.push(
      `mains-coincident: ${r.mainsCoincidentOrders.map((o) => `H${o}`).join(', ')} cannot be told apart from mains hum or its multiples; their levels may include hum`,
    );
  }
  if (r.flags.length) lines.push(`flags: ${r.flags.join(', ')}`);
  return lines.join('\n');
}

function plan(args: string[]): string {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    strict: true,
    options: {
      target: { type: 'string' },
      rate: { type: 'string' },
      mains: { type: 'string' },
      harmonics: { type: 'string' },
      'max-offset': { type: 'string' },
      json: { type: 'boolean', default: false },
    },
  });
  if (positionals.length > 0) throw new UsageProblem(`plan takes no file\n${USAGE}`);
  const maxOffsetHz = numberOption('max-offset', values['max-offset'], (v) => v >= 0, 'a frequency in Hz, 0 or more');
  const targetHz = numberOption('target', values.target, (v) => v > 0, 'a frequency in Hz above 0');
  const sampleRateHz = numberOption('rate', values.rate, (v) => Number.isInteger(v) && v >= 8000, 'a sample rate in Hz, at least 8000');
  if (targetHz === undefined || sampleRateHz === undefined) throw new UsageProblem(`plan needs --target and --rate\n${USAGE}`);
  const harmonicCount = numberOption('harmonics', values.harmonics, (v) => Number.isInteger(v) && v >= 1 && v <= 50, 'a whole number from 1 to 50') ?? 10;
  let choice;
  try {
    choice = planTestFrequency({ targetHz, sampleRateHz, mainsHz: mainsOption(values.mains), harmonicCount, maxOffsetHz });
  } catch (error) {
    if (error instanceof RangeError) throw new UsageProblem(error.message);
    throw error;
  }
  return values.json ? JSON.stringify(choice) : `${choice.frequencyHz} Hz\n${choice.reason}`;
}

function fit(args: string[]): string {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    strict: true,
    options: {
      'margin-db': { type: 'string' },
      step: { type: 'string' },
      'limit-dbc': { type: 'string' },
      json: { type: 'boolean', default: false },
    },
  });
  if (positionals.length !== 1) throw new UsageProblem(`fit takes one CSV file\n${USAGE}`);
  const file = positionals[0];
  const marginDb = numberOption('margin-db', values['margin-db'], (v) => v > 0 && v <= 20, 'a margin in dB above 0, at most 20');
  const step = numberOption('step', values.step, (v) => v > 0, 'a trimmer step above 0');
  const limitDbc = numberOption('limit-dbc', values['limit-dbc'], (v) => v < 0, 'a level in dBc below 0');
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    throw new UsageProblem(`${file}: cannot be read (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`);
  }
  let points;
  try {
    points = parseTrimCsv(text);
  } catch (error) {
    if (error instanceof TrimCsvError) throw new UsageProblem(`${file}: ${error.message}`);
    throw error;
  }
  if (points.length < 2) {
    throw new UsageProblem(`${file}: ${points.length === 1 ? 'only one trim point' : 'no trim points'}; the fit needs at least two`);
  }
  const positions = points.map((p) => p.position);
  let advice: ReturnType<typeof adviseTrim>;
  try {
    advice = adviseTrim(points, {
      positionMin: Math.min(DEFAULT_TRIM_ASSISTANT_OPTIONS.positionMin, ...positions),
      positionMax: Math.max(DEFAULT_TRIM_ASSISTANT_OPTIONS.positionMax, ...positions),
      positionStep: step ?? DEFAULT_TRIM_ASSISTANT_OPTIONS.positionStep,
      limitDbc: limitDbc ?? DEFAULT_TRIM_ASSISTANT_OPTIONS.limitDbc,
      marginDb: marginDb ?? DEFAULT_TRIM_ASSISTANT_OPTIONS.marginDb,
    });
  } catch {
    // The solver's own words (matrix algebra) mean nothing to a technician.
    throw new UsageProblem(`${file}: the fit could not be computed from these points; check the positions and levels for typing errors`);
  }
  // No trustworthy fit: the assistant's own words, and no numbers.
  if (!advice.fit || advice.fitProblem !== null) throw new UsageProblem(`${file}: ${advice.fitProblem ?? 'no fit'}`);
  const result = {
    model: advice.fit.model,
    nullPosition: advice.fit.nullPosition,
    nullPositionPlusMinus: advice.fit.nullPositionPlusMinus,
    nullLevelDbc: advice.fit.nullLevelDbc,
    bracketed: advice.bracketed,
    side: advice.side,
    nextPosition: advice.nextPosition,
    recommendedPosition: advice.recommendedPosition,
    warnings: advice.warnings.map((w) => w.id),
    fitProblem: advice.fitProblem,
  };
  const checkAdvice = 'check the points for a typing error or record more of them';
  refuseNonFinite(file, { ...result, recommendedLevelDbc: advice.recommendedLevelDbc, thermalDeltaC: advice.thermal?.deltaTemperatureC ?? null }, checkAdvice);
  if (values.json) return JSON.stringify(result);
  const thermal = describeThermalMargin(advice.thermal?.deltaTemperatureC ?? null);
  return [
    `${file}: ${points.length} trim points — ${advice.fit.reason}`,
    `null              ${result.nullPosition.toFixed(3)} ± ${result.nullPositionPlusMinus.toFixed(3)}, ${result.nullLevelDbc.toFixed(1)} dBc (${result.bracketed ? 'bracketed' : 'not yet bracketed'})`,
    `latest point      ${result.side}`,
    `next position     ${result.nextPosition.toFixed(2)}`,
    `recommended       ${result.recommendedPosition?.toFixed(3) ?? '— (not yet safe to recommend)'}${advice.recommendedLevelDbc !== null ? ` (predicted ${advice.recommendedLevelDbc.toFixed(1)} dBc)` : ''}`,
    ...(advice.recommendationNote ? [`note              ${advice.recommendationNote}`] : []),
    ...(thermal ? [`thermal margin    ${thermal} (copper α ${advice.thermal!.alphaPerC}/°C)`] : []),
    ...advice.warnings.map((w) => `WARNING ${w.id}: ${w.seen} ${w.advice}`),
  ].join('\n');
}

function procedure(args: string[]): string {
  const [action, ...rest] = args;
  if (action !== 'check') throw new UsageProblem(action ? `unknown action “${action}”; the one action is check\n${USAGE}` : `procedure needs an action: check FILE.json\n${USAGE}`);
  const { positionals } = parseArgs({ args: rest, allowPositionals: true, strict: true, options: {} });
  if (positionals.length !== 1) throw new UsageProblem(`procedure check takes one JSON file\n${USAGE}`);
  const file = positionals[0];
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    throw new UsageProblem(`${file}: cannot be read (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`);
  }
  const result = checkProcedureFile(text);
  // Path first, so the lines sort and grep like the file itself; the file name once, in the summary line.
  if (!result.ok) throw new FileProblems([...result.problems.map((p) => `${p.path}: ${p.message}`), `${file}: ${result.problems.length} problem${result.problems.length === 1 ? '' : 's'}; fix them and check again`]);
  return `${file}: ${result.summary}`;
}

/** The station database in a data folder, opened for reading only; the problem in words when it cannot be. */
function openStationForReading(dir: string): Db {
  const file = join(dir, DATABASE_FILE);
  if (!existsSync(file)) throw new UsageProblem(`${dir}: no station database here (${DATABASE_FILE} not found); give --data the data folder the station uses`);
  try {
    return openForReading(file);
  } catch (error) {
    if (error instanceof ExpectedFailure) throw new UsageProblem(error.message);
    const code = (error as { code?: unknown }).code;
    if (typeof code === 'string') throw new UsageProblem(`${file}: cannot be read as a station database (${code}); keep the file and tell the station's maintainer`);
    throw error;
  }
}

async function sheet(args: string[]): Promise<string> {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    strict: true,
    options: { data: { type: 'string' }, run: { type: 'string' }, json: { type: 'boolean', default: false } },
  });
  if (positionals.length > 0) throw new UsageProblem(`sheet takes no file: give --data DIR and --run N\n${USAGE}`);
  const runId = numberOption('run', values.run, (v) => Number.isInteger(v) && v >= 1 && v <= Number.MAX_SAFE_INTEGER, 'a run number, a whole number from 1');
  if (values.data === undefined || runId === undefined) throw new UsageProblem(`sheet needs --data DIR and --run N\n${USAGE}`);
  const db = openStationForReading(values.data);
  let model: SheetModel;
  try {
    const refuse = () => {
      throw new ExpectedFailure('The command line reads the records; it never writes them.');
    };
    // Through the repository, as every caller of the records: a records server would answer here too.
    const records = sqliteRepository(
      createRecords(db, {
        stationName: () => '',
        calibrations: createCalibrations(db, { stationName: () => '', refuseUnlessWritable: refuse }),
        whyNotWritable: () => 'The command line reads the records; it never writes them.',
        // What the technician is not shown in the app goes to its log; here, to stderr.
        onUnreadable: (record) => process.stderr.write(`${record.what}: ${record.detail}\n`),
      }),
    );
    model = buildSheetModel(await records.getRun(runId));
  } catch (error) {
    if (error instanceof ExpectedFailure) throw new UsageProblem(error.message);
    throw error;
  } finally {
    db.close();
  }
  return values.json ? JSON.stringify(model) : sheetText(model);
}

/**
 * The sheet's gist as lines: the verdict, the invented-values label, each step with its values
 * against their limits (a note's number in brackets), then the notes the page prints under the
 * steps and the trim's final reading with its notes.
 */
function sheetText(model: SheetModel): string {
  const lines = [
    `${model.unit.serial} — run ${model.runId}, ${model.procedure.code} revision ${model.procedure.revision}: ${model.verdict.text}`,
    ...model.verdict.reasons.map((reason) => `  ${reason}`),
    ...(model.verdict.discrepancy ? [`  ${model.verdict.discrepancy}`] : []),
    ...(model.procedure.inventedLabel ? [model.procedure.inventedLabel] : []),
  ];
  for (const step of model.steps) {
    lines.push(`${String(step.number).padStart(2)} ${step.id.padEnd(16)} ${step.statusText}`);
    for (const m of step.measurements) {
      const mark = m.noteNumber === null ? '' : `   [${m.noteNumber}]`;
      lines.push(`     ${m.label.padEnd(10)} ${m.valueText.padStart(14)}   limit ${m.limitText}${m.failing ? '   FAIL' : ''}${mark}`);
    }
  }
  if (model.notes.length > 0) lines.push('Notes', ...model.notes.map((note, i) => `  [${i + 1}] ${note}`));
  if (model.stepsNote) lines.push(model.stepsNote);
  const trim = model.trim;
  if (trim && trim.points.length > 0) {
    lines.push(`Trim: ${trim.finalReading}`);
    for (const w of trim.warnings) lines.push(`  ${w.title} ${w.change} at ${w.position} ${trim.positionUnit}, after point ${w.afterSequence}: ${w.seen}`);
    for (const note of [trim.atFloorNote, trim.unsettledNote, trim.warningsNote]) if (note) lines.push(`  ${note}`);
  }
  return lines.join('\n');
}

async function demoLine(args: string[]): Promise<string> {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    strict: true,
    options: { units: { type: 'string' }, data: { type: 'string' }, seed: { type: 'string' }, json: { type: 'boolean', default: false } },
  });
  if (positionals.length > 0) throw new UsageProblem(`demo-line takes no file\n${USAGE}`);
  const units = numberOption('units', values.units, (v) => Number.isInteger(v) && v >= 1 && v <= 9999, 'a whole number of units from 1 to 9999');
  if (units === undefined) throw new UsageProblem(`demo-line needs --units N\n${USAGE}`);
  if (values.data === undefined || values.data.trim() === '') throw new UsageProblem(`demo-line needs --data DIR, the station's data folder\n${USAGE}`);
  const seed = numberOption('seed', values.seed, (v) => Number.isInteger(v) && v >= 0 && v < 2 ** 32, 'a whole number from 0 to 4294967295') ?? 1;
  const startedAt = performance.now();
  let report: DemoLineReport;
  try {
    report = await runDemoLine({
      units,
      dataDir: values.data,
      seed,
      // Progress on one line of stderr, so stdout stays the result alone.
      onUnitDone: values.json
        ? undefined
        : (done, total) => {
            const perUnit = (performance.now() - startedAt) / 1000 / done;
            process.stderr.write(`\r${done}/${total} units done, about ${Math.ceil(perUnit * (total - done))} s left `);
            if (done === total) process.stderr.write('\n');
          },
    });
  } catch (error) {
    if (error instanceof DemoLineProblem || error instanceof ExpectedFailure || error instanceof LineCallRefused) throw new UsageProblem((error as Error).message);
    throw error;
  }
  if (values.json) return JSON.stringify(report);
  const minutes = (performance.now() - startedAt) / 60000;
  return [
    'serial           verdict  final  true null  points  failed steps',
    ...report.units.map((u) =>
      [
        u.serial.padEnd(17),
        u.verdict.toUpperCase().padEnd(9),
        (u.trim.finalPosition?.toFixed(2) ?? '—').padStart(5),
        u.trim.trueNullPosition.toFixed(2).padStart(11),
        String(u.trim.points).padStart(8),
        `  ${u.steps.filter((s) => s.verdict === 'fail').map((s) => s.id).join(', ') || '—'}`,
      ].join(''),
    ),
    `${report.passed} passed, ${report.failed} failed, ${(report.units.length / minutes).toFixed(1)} units a minute; the runs are in ${values.data}`,
  ].join('\n');
}

async function main(argv: string[]): Promise<number> {
  const [command, ...rest] = argv;
  try {
    if (command === 'help' || command === '--help' || command === '-h') process.stdout.write(`${USAGE}\n`);
    else if (command === 'analyze') process.stdout.write(`${analyze(rest)}\n`);
    else if (command === 'plan') process.stdout.write(`${plan(rest)}\n`);
    else if (command === 'fit') process.stdout.write(`${fit(rest)}\n`);
    else if (command === 'procedure') process.stdout.write(`${procedure(rest)}\n`);
    else if (command === 'sheet') process.stdout.write(`${await sheet(rest)}\n`);
    else if (command === 'demo-line') process.stdout.write(`${await demoLine(rest)}\n`);
    else if (command === 'sweep') process.stdout.write(`${sweepCommand(rest)}\n`);
    else if (command === 'response') process.stdout.write(`${responseCommand(rest)}\n`);
    else if (command === 'ringing') process.stdout.write(`${ringingCommand(rest)}\n`);
    else throw new UsageProblem(command ? `unknown command “${command}”\n${USAGE}` : USAGE);
    return 0;
  } catch (error) {
    if (error instanceof FileProblems) {
      process.stderr.write(`${error.lines.join('\n')}\n`);
      return 1;
    }
    const expected = error instanceof UsageProblem || (error as { code?: string }).code?.startsWith('ERR_PARSE_ARGS');
    const prefix = `trimbench ${command ?? ''}: `.replace(/^trimbench : /, 'trimbench: ');
    if (expected) {
      process.stderr.write(`${prefix}${(error as Error).message}\n`);
      return 1;
    }
    // A bug, not the user's input: one line they can report; the stack only on request.
    const message = (error instanceof Error ? error.message : String(error)).split('\n')[0].replace(/\.$/, '');
    process.stderr.write(`${prefix}internal error: ${message}. Run again with TRIMBENCH_DEBUG=1 for details.\n`);
    if (process.env.TRIMBENCH_DEBUG === '1') process.stderr.write(`${error instanceof Error ? error.stack : String(error)}\n`);
    return 2;
  }
}

process.exitCode = await main(process.argv.slice(2));
