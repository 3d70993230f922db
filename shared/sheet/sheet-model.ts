// The unit sheet's content, built once from the stored run: what it says, which text says PASS, which
// rows are marked failing. The page renders it (renderer/ui/UnitSheet.tsx) and the command line
// prints it as JSON (`trimbench sheet --json`), so the two can never tell a unit's story differently.
//
// Nothing is judged here. The verdict is the run's stored one (main decided it at Finish); a step's
// status is main's judgement over the stored results (judgeUnit); a measurement's verdict is the one
// stored with it beside its limits. Times stay ISO 8601: only the page knows its clock's zone.

import type { CalibrationUsed } from '../calibration/station-calibration.ts';
import { AT_FLOOR_MARGIN_DB } from '../calibration/station-calibration.ts';
import { fixed, percent } from '../format.ts';
import type { RunDetail, StepResult, StoredMeasurement, TrimPoint } from '../ipc/contract.ts';
import { dbuFromDbfs, formatLevel, signedFixed, type LevelCalibration } from '../levels.ts';
import { harmonicLevel } from '../procedures/check-steps.ts';
import type { ProcedureStep } from '../procedures/procedure-file.ts';
import { limitText, quantityDecimals, quantityLabel, stepConditions, valueText } from '../procedures/step-text.ts';
import type { StepStatus } from '../procedures/unit-verdict.ts';
import { describeThermalMargin } from '../trim/trim-assistant.ts';
import { WARNING_TITLES } from '../trim/warning-titles.ts';


/** The trimmed harmonic's level at a point, by the one rule for "the level of harmonic n" (none when not measured). */
const trimmedHarmonicDbc = (point: TrimPoint, order: number): number | undefined => {
  const level = harmonicLevel(point.reading, order);
  return level.measured ? level.levelDbc : undefined;
};

export type VerdictText = 'PASS' | 'FAIL' | 'NOT FINISHED';

export interface SheetMeasurement {
  /** The limit's key in the step ("thdDb", "harmonicsDbc.H3", …) and its name on the sheet ("THD", "H3"). */
  quantity: string;
  label: string;
  value: number | null;
  unit: string;
  low: number | null;
  high: number | null;
  verdict: 'pass' | 'fail';
  /** Marked on the sheet: the stored verdict is a fail. */
  failing: boolean;
  valueText: string;
  /** The limit as stored with the value; inclusive (docs/procedures.md), so written ≤ and ≥. */
  limitText: string;
  note: string | null;
  /** The note's number among the sheet's `notes` (a footnote, so each row stays one line); null without a note. */
  noteNumber: number | null;
}

export interface SheetStep {
  /** 1-based, in procedure order. */
  number: number;
  id: string;
  title: string;
  kind: ProcedureStep['kind'];
  status: StepStatus | 'not-recorded';
  statusText: string;
  failing: boolean;
  /** What the step asks for: its frequency and level, the generator off, the band. */
  conditions: string;
  /** How many times the step was recorded (a repeat counts once more); the latest counts. */
  attempts: number;
  recordedAt: string | null;
  reasons: string[];
  measurements: SheetMeasurement[];
}

export interface SheetTrimPoint {
  sequence: number;
  recordedAt: string;
  position: string;
  harmonicDbc: string;
  thdDb: string;
  /** The final reading sat within the margin of the chain's own residual (marked † with a note). */
  atFloor: boolean;
  thdPercent: string;
  fundamental: string;
  settled: string;
  /** Left out of the fit (unsettled, not confirmed): marked. */
  outOfFit: boolean;
}

export interface SheetTrim {
  stepId: string | null;
  positionUnit: string;
  harmonicOrder: number;
  positionMin: number;
  positionMax: number;
  stimulus: string;
  /** The trim's limit, where the steps do not show it already (a run without step results); else null. */
  limit: string | null;
  finalReading: string;
  fundamentalHeading: string;
  points: SheetTrimPoint[];
  atFloorNote: string | null;
  unsettledNote: string | null;
  curveFit: string;
  nullText: string;
  recommended: string;
  thermalMargin: string;
  warmCheck: string;
  warnings: { at: string; title: string; change: 'raised' | 'cleared'; position: string; afterSequence: number; seen: string }[];
  warningsNote: string | null;
}

export type SheetCalibration =
  | { used: false; text: string }
  | {
      used: true;
      id: number;
      operator: string;
      madeAt: string;
      expiresAt: string;
      /** "0 dBFS = +6.0 dBu in, +8.0 dBu out". */
      levels: string;
      chainFloor: { text: string; checkedAt: string; passText: 'PASS' | 'FAIL' } | null;
      noChainFloorText: string | null;
    };

export interface SheetModel {
  runId: number;
  /** The page title, which the PDF's running header prints on every page. */
  documentTitle: string;
  station: string;
  operator: string;
  startedAt: string;
  finishedAt: string | null;
  unit: { serial: string; modelCode: string; modelName: string; maker: string; lot: string | null };
  procedure: { code: string; revision: string; title: string; invented: boolean; inventedLabel: string | null };
  /** The run this one repeats and why; `text` also says when it is the unit's first test. */
  retest: { ofRunId: number | null; reason: string | null; earlierRuns: number; text: string };
  calibration: SheetCalibration;
  verdict: {
    /** The run's stored verdict; null while the run is not finished. */
    verdict: 'pass' | 'fail' | null;
    text: VerdictText;
    reasons: string[];
    /** Set when the stored verdict and main's judgement of the stored steps disagree: a record to look into. */
    discrepancy: string | null;
  };
  steps: SheetStep[];
  /** The measurements' notes, numbered from 1 in the order the steps first give them, each once. */
  notes: string[];
  stepsNote: string | null;
  trim: SheetTrim | null;
  footer: string;
}

const INVENTED_LABEL = 'Demo procedure — the maker, product, limits and values on this sheet are invented for practice.';

function sheetMeasurement(m: StoredMeasurement, notes: string[]): SheetMeasurement {
  const decimals = quantityDecimals(m.quantity);
  const at = m.note === null ? -1 : notes.indexOf(m.note);
  const noteNumber = m.note === null ? null : at >= 0 ? at + 1 : notes.push(m.note);
  return {
    quantity: m.quantity,
    label: quantityLabel(m.quantity),
    value: m.value,
    unit: m.unit,
    low: m.low,
    high: m.high,
    verdict: m.verdict,
    failing: m.verdict === 'fail',
    valueText: m.value === null ? 'not measured' : valueText(m.value, m.unit, decimals),
    limitText: limitText(m, decimals),
    note: m.note,
    noteNumber,
  };
}

function conditionsOf(step: ProcedureStep, result: StepResult | undefined): string {
  const conditions = step.kind === 'trim' ? `${stepConditions(step)}; the trim is below` : stepConditions(step);
  // The figures of a ringing step come from a file: the sheet names it, so the record can be found.
  if (result?.scopeRecord) return `${conditions}; record “${result.scopeRecord.fileName}”, ${result.scopeRecord.edges} edges`;
  // The planner may move a step's frequency a little off mains: the frequency played is said too.
  const nominal = 'frequencyHz' in step ? step.frequencyHz : null;
  const played = result?.stimulus?.frequencyHz;
  if (nominal === null || played === undefined || Math.abs(played - nominal) <= 1e-6 * nominal) return conditions;
  return `${conditions} (played ${fixed(played, 2)} Hz)`;
}

const STATUS_TEXT: Record<SheetStep['status'], string> = { pass: 'PASS', fail: 'FAIL', 'not-run': 'not run', 'not-recorded': 'not recorded' };

function sheetSteps(detail: RunDetail, legacy: boolean, notes: string[]): SheetStep[] {
  const judged = new Map(detail.judgement.steps.map((s) => [s.stepId, s.status]));
  return detail.procedureFile.steps.map((step, index) => {
    const results = detail.stepResults.filter((r) => r.stepId === step.id);
    const latest = results.at(-1);
    const status: SheetStep['status'] = legacy ? 'not-recorded' : (judged.get(step.id) ?? 'not-run');
    // A result recorded after the run stopped is not part of the verdict: it is not shown as the step's.
    const shown = status === 'not-run' || status === 'not-recorded' ? undefined : latest;
    return {
      number: index + 1,
      id: step.id,
      title: step.title,
      kind: step.kind,
      status,
      statusText: step.kind === 'notice' && status === 'pass' ? 'acknowledged' : STATUS_TEXT[status],
      failing: status === 'fail',
      conditions: conditionsOf(step, shown),
      attempts: results.length,
      recordedAt: shown?.recordedAt ?? null,
      reasons: shown?.reasons ?? [],
      measurements: (shown?.measurements ?? []).map((m) => sheetMeasurement(m, notes)),
    };
  });
}

function sheetCalibration(used: CalibrationUsed | null): SheetCalibration {
  if (!used) return { used: false, text: 'Station not calibrated: levels in dBFS only.' };
  const floor = used.chainFloor;
  return {
    used: true,
    id: used.id,
    operator: used.operator,
    madeAt: used.madeAt,
    expiresAt: used.expiresAt,
    levels: `0 dBFS = ${signedFixed(used.inputDbuAtFullScale, 1)} dBu in${used.secondInput ? ` (input ${used.secondInput.channel + 1}, channel 2: ${signedFixed(used.secondInput.dbuAtFullScale, 1)} dBu)` : ''}, ${signedFixed(used.outputDbuAtFullScale, 1)} dBu out`,
    chainFloor: floor
      ? {
          text: [
            floor.residualThdDb !== null && floor.residualAtHz !== null ? `residual THD ${fixed(floor.residualThdDb, 1)} dB at ${fixed(floor.residualAtHz, 0)} Hz` : 'no residual THD measured',
            floor.noiseAWeightedDbu !== null ? `noise ${signedFixed(floor.noiseAWeightedDbu, 1)} dBu A-weighted` : 'noise not measured in dBu',
          ].join(' · '),
          checkedAt: floor.checkedAt,
          passText: floor.pass ? 'PASS' : 'FAIL',
        }
      : null,
    noChainFloorText: floor ? null : 'not checked: no chain check with this calibration',
  };
}

function sheetTrim(detail: RunDetail, legacy: boolean): SheetTrim | null {
  const { trimPoints, assessment, warmCheck, calibration: used } = detail;
  const step = detail.procedureFile.steps.find((s) => s.kind === 'trim');
  // A procedure without a trim step has no trim section; today every stored procedure has one.
  if (!step) return null;
  const order = assessment?.harmonicOrder ?? step.harmonicOrder;
  const unit = step.positionUnit;
  const input: LevelCalibration | null = used ? { dbuAtFullScale: used.inputDbuAtFullScale } : null;
  const output: LevelCalibration | null = used ? { dbuAtFullScale: used.outputDbuAtFullScale } : null;
  const atFloor = (p: TrimPoint) => p.reading.flags.includes('at-floor');
  const final = trimPoints.at(-1);
  const a = assessment;
  return {
    stepId: step.id,
    positionUnit: unit,
    harmonicOrder: order,
    positionMin: step.positionMin,
    positionMax: step.positionMax,
    stimulus: `${final?.stimulusHz != null ? `${fixed(final.stimulusHz, 3)} Hz` : '—'} at ${formatLevel(step.stimulusLevelDbfs, output)} (procedure: ${step.stimulusHz} Hz)`,
    limit: legacy || !detail.stepResults.some((r) => r.stepId === step.id) ? `THD ≤ ${fixed(detail.run.limitThdDb, 1)} dB at the final trim point` : null,
    finalReading: final
      ? `THD ${fixed(final.reading.thdDb, 1)} dB (${percent(final.reading.thdPercent)}) at ${fixed(final.reading.fundamental.frequencyHz, 2)} Hz, ${formatLevel(final.reading.fundamental.levelDbfs, input, 2)}, trimmer at ${fixed(final.position, 2)} ${unit}${final.settled ? '' : ' (unsettled)'}${atFloor(final) ? ' (at the station’s floor †)' : ''}`
      : '—',
    fundamentalHeading: input ? 'Fundamental, dBu (dBFS)' : 'Fundamental, dBFS',
    points: trimPoints.map((p) => ({
      sequence: p.sequence,
      recordedAt: p.recordedAt,
      position: fixed(p.position, 2),
      harmonicDbc: fixed(trimmedHarmonicDbc(p, order), 1),
      thdDb: fixed(p.reading.thdDb, 1),
      atFloor: atFloor(p),
      thdPercent: percent(p.reading.thdPercent).replace(' %', ''),
      fundamental: input
        ? `${signedFixed(dbuFromDbfs(p.reading.fundamental.levelDbfs, input), 2)} (${fixed(p.reading.fundamental.levelDbfs, 2)})`
        : fixed(p.reading.fundamental.levelDbfs, 2),
      settled: p.settled ? 'yes' : p.inFit ? 'no, confirmed *' : 'no *',
      outOfFit: !p.inFit,
    })),
    atFloorNote: trimPoints.some(atFloor)
      ? `† At the station’s floor: THD within ${AT_FLOOR_MARGIN_DB} dB of the chain’s residual${used?.chainFloor?.residualThdDb != null ? ` (${fixed(used.chainFloor.residualThdDb, 1)} dB)` : ''}; the unit may be better than it reads.`
      : null,
    unsettledNote: trimPoints.some((p) => !p.settled)
      ? '* Unsettled: recorded deliberately before the reading had settled, so its value may still have been changing. An unsettled point is left out of the curve fit and the verdict unless the technician confirmed it.'
      : null,
    curveFit: a?.fitProblem ?? (a?.reason || '—'),
    nullText:
      a?.nullPosition != null
        ? `${fixed(a.nullPosition, 2)} ± ${fixed(a.nullPositionPlusMinus, 2)} ${unit}, H${order} ${fixed(a.nullLevelDbc, 1)} dBc${a.bracketed ? '' : ' (not bracketed)'}`
        : '—',
    recommended:
      a?.recommendedPosition != null
        ? `${fixed(a.recommendedPosition, 2)} ${unit} (predicted H${order} ${fixed(a.recommendedLevelDbc, 1)} dBc); final point at ${fixed(final?.position, 2)}, ${a.side === 'past-null' ? 'past the null' : 'short of the null'}`
        : '—',
    thermalMargin: describeThermalMargin(a?.thermalMarginC ?? null) ?? '—',
    warmCheck: warmCheck
      ? `${fixed(warmCheck.coldTemperatureC, 1)} → ${fixed(warmCheck.warmTemperatureC, 1)} °C: H${order} ${fixed(warmCheck.coldLevelDbc, 1)} → ${fixed(warmCheck.warmLevelDbc, 1)} dBc; the unit's tracking held ${fixed(100 * warmCheck.trackingFraction, 0)} % of the untracked drift`
      : 'not done',
    warnings: detail.warningLog.map((w) => ({
      at: w.at,
      title: WARNING_TITLES[w.id],
      change: w.change,
      position: fixed(w.position, 2),
      afterSequence: w.afterSequence,
      seen: w.seen,
    })),
    warningsNote:
      detail.warningLog.length > 0
        ? 'A warning still active at the final point fails the unit; one that was raised and cleared earlier is listed here for the record.'
        : null,
  };
}

function sheetVerdict(detail: RunDetail, legacy: boolean): SheetModel['verdict'] {
  const { run, judgement } = detail;
  if (run.finishedAt === null || run.verdict === null) {
    return { verdict: null, text: 'NOT FINISHED', reasons: judgement.reasons, discrepancy: null };
  }
  // Runs finished before step results were kept were judged on the trim alone: their judgement over
  // steps says "not run" for what was done, so it is not held against the stored verdict. A stored
  // FAIL over steps that all passed is main's own doing (finished as FAIL by the technician, a
  // calibration that lapsed): only a PASS the stored steps do not bear out cannot have come from main.
  const disagrees = !legacy && run.verdict === 'pass' && judgement.verdict !== 'pass';
  return {
    verdict: run.verdict,
    text: run.verdict === 'pass' ? 'PASS' : 'FAIL',
    reasons: run.verdictReasons.length > 0 ? run.verdictReasons : run.verdictReason ? [run.verdictReason] : [],
    discrepancy: disagrees
      ? `The stored verdict is ${run.verdict.toUpperCase()}, but the step results stored with the run judge ${judgement.verdict.toUpperCase()}: the record may have been changed. Tell the station's maintainer.`
      : null,
  };
}

/** Everything the unit sheet shows, from the run as main holds it. */
export function buildSheetModel(detail: RunDetail): SheetModel {
  const { run, procedureFile: file } = detail;
  const legacy = !run.walked;
  const verdict = sheetVerdict(detail, legacy);
  const notes: string[] = [];
  const steps = sheetSteps(detail, legacy, notes);
  return {
    runId: run.id,
    documentTitle: `${run.serial} · ${verdict.text}`,
    station: run.station,
    operator: run.operator,
    startedAt: run.startedAt,
    finishedAt: run.finishedAt,
    unit: { serial: run.serial, modelCode: file.model.code, modelName: file.model.name, maker: file.model.maker, lot: run.lot },
    procedure: {
      code: run.procedureCode,
      revision: run.procedureRevision,
      title: file.title,
      invented: run.invented,
      inventedLabel: run.invented ? INVENTED_LABEL : null,
    },
    retest: {
      ofRunId: run.retestOf,
      reason: run.retestReason,
      earlierRuns: detail.earlierRuns,
      text:
        run.retestOf === null && detail.earlierRuns === 0
          ? 'no: the first test of this unit'
          : [run.retestOf !== null ? `retest of run ${run.retestOf}` : 'retest', `${detail.earlierRuns} earlier run${detail.earlierRuns === 1 ? '' : 's'}`].join('; ') +
            (run.retestReason ? `: ${run.retestReason}` : ''),
    },
    calibration: sheetCalibration(detail.calibration),
    verdict,
    steps,
    notes,
    stepsNote: legacy ? 'This run was recorded before results were kept step by step: its verdict is the trim’s, below.' : null,
    trim: sheetTrim(detail, legacy),
    footer: 'Made with Trimbench. Trimbench measures; it does not certify electrical safety.',
  };
}
