// The unit sheet's content (shared/sheet/sheet-model.ts) from constructed runs of the demo
// procedure file: every step in the file's order, the stored verdict and no other, failing rows
// marked, limits written as the inclusive bounds docs/procedures.md defines, levels in dBu by the
// dBu's definition.

import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { runDetailSchema, type RunDetail, type StepResult } from '../../shared/ipc/contract.ts';
import { procedureFileSchema } from '../../shared/procedures/procedure-file.ts';
import { judgeUnit } from '../../shared/procedures/unit-verdict.ts';
import { buildSheetModel } from '../../shared/sheet/sheet-model.ts';
import { asSentences } from '../../shared/format.ts';
import { readingWithThd } from '../support/station.ts';

const DEMO_FILE_TEXT = readFileSync(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url), 'utf8');
const DEMO_FILE = procedureFileSchema.parse(JSON.parse(DEMO_FILE_TEXT));
/** The step ids as the file lists them, read from the JSON text itself. */
const FILE_ORDER = (JSON.parse(DEMO_FILE_TEXT) as { steps: { id: string }[] }).steps.map((s) => s.id);

type Measured = StepResult['measurements'][number];
const m = (quantity: string, value: number | null, unit: string, low: number | null, high: number | null, verdict: 'pass' | 'fail', note: string | null = null): Measured => ({
  quantity,
  value,
  unit,
  low,
  high,
  verdict,
  note,
});

let nextId = 1;
function result(stepId: string, verdict: 'pass' | 'fail', measurements: Measured[] = [], reasons: string[] = []): StepResult {
  const step = DEMO_FILE.steps.find((s) => s.id === stepId)!;
  return {
    id: nextId++,
    stepId,
    kind: step.kind,
    attempt: 1,
    recordedAt: '2026-11-30T10:00:00.000Z',
    verdict,
    reasons,
    measurements,
    stimulus: null,
  };
}

function detail({ stepResults, verdict, reasons = [], finished = true, walked = true }: { stepResults: StepResult[]; verdict: 'pass' | 'fail' | null; reasons?: string[]; finished?: boolean; walked?: boolean }): RunDetail {
  return runDetailSchema.parse({
    run: {
      id: 7,
      serial: 'MG20-2611-0042',
      procedureId: 2,
      procedureCode: DEMO_FILE.code,
      procedureRevision: DEMO_FILE.revision,
      procedureTitle: DEMO_FILE.title,
      invented: true,
      modelCode: DEMO_FILE.model.code,
      modelName: DEMO_FILE.model.name,
      operator: 'A. Tester',
      station: 'bench-3',
      startedAt: '2026-11-30T09:40:00.000Z',
      finishedAt: finished ? '2026-11-30T10:05:00.000Z' : null,
      verdict: finished ? verdict : null,
      verdictReason: reasons.join(' ') || null,
      verdictReasons: reasons,
      finalThdDb: -66,
      limitThdDb: -60,
      sheetPdfPath: null,
      retestOf: 5,
      retestReason: 'Replaced C12 after the first test.',
      lot: 'WO-1187',
      walked,
    },
    trimPoints: [],
    assessment: null,
    warningsRaised: [],
    warningLog: [],
    warmCheck: null,
    earlierRuns: 1,
    calibration: null,
    procedure: { schemaVersion: 1, code: DEMO_FILE.code, revision: DEMO_FILE.revision, title: DEMO_FILE.title, invented: true, model: { code: 'MG-20', name: DEMO_FILE.model.name, maker: DEMO_FILE.model.maker }, serial: DEMO_FILE.serial, trim: { stimulusHz: 14, stimulusLevelDbfs: -12, positionUnit: 'turns', positionMin: 0, positionMax: 10, positionStep: 0.25, limitThdDb: -60, instructions: ['Trim.'] } },
    procedureFile: DEMO_FILE,
    stepResults,
    judgement: judgeUnit(DEMO_FILE, stepResults),
  });
}

/** Every step of the demo file passing, with values inside the file's limits. */
function allPassing(): StepResult[] {
  return [
    result('safety', 'pass'),
    result('lf-trim', 'pass', [m('thdDb', -66.2, 'dB', null, -60, 'pass')]),
    result('thd-14hz', 'pass', [m('thdDb', -50, 'dB', null, -50, 'pass'), m('harmonicsDbc.H3', -53.1, 'dBc', null, -52, 'pass')]),
    result('thd-20hz', 'pass', [m('thdDb', -58.4, 'dB', null, -55, 'pass'), m('harmonicsDbc.H3', -59.0, 'dBc', null, -57, 'pass')]),
    result('thd-50hz', 'pass', [m('thdDb', -67.3, 'dB', null, -62, 'pass')]),
    result('thd-1khz', 'pass', [m('thdDb', -80.5, 'dB', null, -70, 'pass'), m('thdnDb', -74.0, 'dB', null, -66, 'pass')]),
    result('thd-10khz', 'pass', [m('thdDb', -72.0, 'dB', null, -64, 'pass')]),
    result('gain-1khz', 'pass', [m('gainDb', 0.12, 'dB', -0.5, 0.5, 'pass', '+4.12 dBu out for +4.00 dBu in')]),
    result('noise-a', 'pass', [m('noiseDbu', -91.3, 'dBu', null, -85, 'pass')]),
    result('hum', 'pass', [m('humDbu', -88.0, 'dBu', null, -80, 'pass')]),
    result('response', 'pass', [m('maskMarginDb', 0.36, 'dB', 0, null, 'pass')]),
    result('max-level-1khz', 'pass', [m('maxLevelDbu', 16.6, 'dBu', 14, null, 'pass')]),
    result('ringing-20k', 'pass', [
      m('ringFrequencyHz', 258000, 'Hz', 100000, null, 'pass'),
      m('dampingRatio', 0.49, 'ratio', 0.35, null, 'pass'),
      m('overshootPercent', 16.3, '%', null, 30, 'pass'),
      m('settlingTimeS', 3.6e-6, 's', null, 1e-5, 'pass'),
    ]),
  ];
}

describe('the sheet model', () => {
  it('lists every step of the procedure file in its order, with the latest of a repeated step (issue 10: a step can be repeated; the latest counts)', () => {
    const results = allPassing();
    // thd-20hz failed first, was repeated after a cable was reseated, and passed: recorded out of order.
    const first = { ...result('thd-20hz', 'fail', [m('thdDb', -51.0, 'dB', null, -55, 'fail')], ['THD −51.0 dB is above the high limit of −55 dB.']), recordedAt: '2026-11-30T09:58:00.000Z' };
    const repeated = { ...results.find((r) => r.stepId === 'thd-20hz')!, attempt: 2 };
    const stored = [...results.filter((r) => r.stepId !== 'thd-20hz'), first, repeated];
    const sheet = buildSheetModel(detail({ stepResults: stored, verdict: 'pass' }));
    expect(sheet.steps.map((s) => s.id)).toEqual(FILE_ORDER);
    expect(sheet.steps.map((s) => s.number)).toEqual(FILE_ORDER.map((_, i) => i + 1));
    const step = sheet.steps.find((s) => s.id === 'thd-20hz')!;
    expect(step.attempts).toBe(2);
    expect(step.statusText).toBe('PASS');
    expect(step.measurements.map((x) => x.valueText)).toEqual(['−58.4 dB', '−59.0 dBc']);
    expect(step.reasons).toEqual([]);
    expect(sheet.verdict.text).toBe('PASS');
    expect(sheet.verdict.discrepancy).toBeNull();
    expect(sheet.steps.some((s) => s.failing)).toBe(false);
  });

  it('writes limits as inclusive bounds and leaves a value exactly at its bound unmarked (docs/procedures.md: low ≤ value ≤ high)', () => {
    const sheet = buildSheetModel(detail({ stepResults: allPassing(), verdict: 'pass' }));
    const thd14 = sheet.steps.find((s) => s.id === 'thd-14hz')!.measurements[0];
    // −50 dB against a high limit of −50 dB: at the bound, so inside it.
    expect(thd14).toMatchObject({ label: 'THD', valueText: '−50.0 dB', limitText: '≤ −50.0 dB', failing: false });
    const gain = sheet.steps.find((s) => s.id === 'gain-1khz')!.measurements[0];
    // A two-sided limit reads as a range; gain to the hundredth, as the ±0.5 dB window asks.
    expect(gain).toMatchObject({ label: 'Gain', valueText: '+0.12 dB', limitText: '−0.50 to +0.50 dB' });
    expect(sheet.steps.find((s) => s.id === 'thd-14hz')!.measurements[1].label).toBe('H3');
  });

  it('marks the failing rows and shows the stored FAIL with its reasons, never a verdict of its own', () => {
    const results = allPassing();
    const reason = 'Hum −76.0 dBu is above the high limit of −80 dBu.';
    const failedHum = result('hum', 'fail', [m('humDbu', -76, 'dBu', null, -80, 'fail', '50.00 Hz mains')], [reason]);
    const stored = [...results.filter((r) => r.stepId !== 'hum'), failedHum];
    const sheet = buildSheetModel(detail({ stepResults: stored, verdict: 'fail', reasons: [`Step “hum” (Hum (invented limit)) failed: ${reason}`] }));
    const hum = sheet.steps.find((s) => s.id === 'hum')!;
    expect(hum).toMatchObject({ status: 'fail', statusText: 'FAIL', failing: true, reasons: [reason] });
    expect(hum.measurements[0]).toMatchObject({ failing: true, valueText: '−76.0 dBu', limitText: '≤ −80.0 dBu', note: '50.00 Hz mains' });
    expect(sheet.steps.filter((s) => s.failing).map((s) => s.id)).toEqual(['hum']);
    expect(sheet.verdict).toMatchObject({ verdict: 'fail', text: 'FAIL', reasons: [`Step “hum” (Hum (invented limit)) failed: ${reason}`], discrepancy: null });
    // The running header of every PDF page carries the serial and the verdict.
    expect(sheet.documentTitle).toBe('MG20-2611-0042 · FAIL');
  });

  it('numbers the measurements’ notes as footnotes: in step order, a note given twice numbered once (common practice for footnotes)', () => {
    const results = allPassing();
    const mains = '50.00 Hz mains; the power sum of the fundamental';
    const stored = results.map((r) =>
      r.stepId === 'noise-a' ? { ...r, measurements: [m('noiseDbu', -91.3, 'dBu', null, -85, 'pass', mains)] } : r.stepId === 'hum' ? { ...r, measurements: [m('humDbu', -88.0, 'dBu', null, -80, 'pass', mains)] } : r,
    );
    const sheet = buildSheetModel(detail({ stepResults: stored, verdict: 'pass' }));
    // The gain step's note comes first in the file's order, then the one note noise and hum share.
    expect(sheet.notes).toEqual(['+4.12 dBu out for +4.00 dBu in', mains]);
    const measured = (id: string) => sheet.steps.find((s) => s.id === id)!.measurements[0];
    expect([measured('gain-1khz').noteNumber, measured('noise-a').noteNumber, measured('hum').noteNumber]).toEqual([1, 2, 2]);
    expect(measured('thd-50hz').noteNumber).toBeNull();
  });

  it('runs a step’s reasons together as sentences: each ends with its full stop (common practice in English prose)', () => {
    // The trim's reasons as judgeTrimRun words them when one point locates no null: the first ends
    // on the fit's own message, which has no full stop of its own.
    const reasons = [
      'The null was not located: the trim fit needs at least two points; there is one',
      'The final point (1, at 3.00 turns) was recorded before its reading settled.',
      'A warning stands at the final point: level wandering by 0.4 dB',
    ];
    expect(asSentences(reasons)).toBe(
      'The null was not located: the trim fit needs at least two points; there is one. The final point (1, at 3.00 turns) was recorded before its reading settled. A warning stands at the final point: level wandering by 0.4 dB.',
    );
    // A sentence ending in a quotation or a question keeps its own mark.
    expect(asSentences(['It said “check the cable.”', 'Is the unit on?'])).toBe('It said “check the cable.” Is the unit on?');
    // The unit's verdict names the failed trim with its reasons, as sentences.
    const judged = judgeUnit(DEMO_FILE, [result('safety', 'pass'), result('lf-trim', 'fail', [m('thdDb', -57.2, 'dB', null, -60, 'fail')], reasons)]);
    expect(judged.reasons[0]).toMatch(/there is one\. The final point .* settled\. A warning stands .* 0\.4 dB\.$/);
  });

  it('says so when the stored verdict and the stored steps disagree, keeping the stored one', () => {
    const results = allPassing();
    const failedNoise = result('noise-a', 'fail', [m('noiseDbu', -80.2, 'dBu', null, -85, 'fail')], ['Noise −80.2 dBu is above the high limit of −85 dBu.']);
    const stored = [...results.filter((r) => r.stepId !== 'noise-a'), failedNoise];
    const sheet = buildSheetModel(detail({ stepResults: stored, verdict: 'pass' }));
    expect(sheet.verdict.text).toBe('PASS');
    expect(sheet.verdict.discrepancy).toMatch(/stored verdict is PASS.*judge FAIL/);
  });

  it('after a failed step that stops the run, shows the later steps as not run (issue 10: a failed “stop” step ends the run)', () => {
    const stored = [
      result('safety', 'pass'),
      result('lf-trim', 'pass'),
      result('thd-14hz', 'fail', [m('thdDb', -45, 'dB', null, -50, 'fail')], ['THD −45.0 dB is above the high limit of −50 dB.']),
    ];
    const sheet = buildSheetModel(detail({ stepResults: stored, verdict: 'fail' }));
    expect(sheet.steps.map((s) => s.statusText)).toEqual(['acknowledged', 'PASS', 'FAIL', ...FILE_ORDER.slice(3).map(() => 'not run')]);
  });

  it('an unfinished run says NOT FINISHED, never PASS, with what is still missing', () => {
    const sheet = buildSheetModel(detail({ stepResults: allPassing().slice(0, 4), verdict: null, finished: false }));
    expect(sheet.verdict.verdict).toBeNull();
    expect(sheet.verdict.text).toBe('NOT FINISHED');
    expect(sheet.verdict.reasons[0]).toMatch(/thd-50hz.*not run/);
  });

  it('carries the unit, lot, procedure, retest link and reason, and the invented label', () => {
    const sheet = buildSheetModel(detail({ stepResults: allPassing(), verdict: 'pass' }));
    expect(sheet.unit).toEqual({ serial: 'MG20-2611-0042', modelCode: 'MG-20', modelName: 'MG-20 transformer line amplifier', maker: 'Marrowgate Audio Works (invented)', lot: 'WO-1187' });
    expect(sheet.procedure).toMatchObject({ code: 'MG20-LF-TRIM', revision: 'E', invented: true });
    expect(sheet.procedure.inventedLabel).toMatch(/invented/);
    expect(sheet.retest).toMatchObject({ ofRunId: 5, reason: 'Replaced C12 after the first test.' });
    expect(sheet.retest.text).toContain('retest of run 5');
    expect(sheet.calibration).toEqual({ used: false, text: expect.stringMatching(/not calibrated/) });
  });

  it('gives trim levels in dBu from the calibration the run used (0 dBu = √0.6 V ≈ 0.7746 V RMS)', () => {
    // An input that reads a 1.5492 V RMS sine as full scale: 20·log10(1.5492/0.7746) = +6.02 dBu.
    const fullScaleVrms = 1.5492;
    const inputDbu = 20 * Math.log10(fullScaleVrms / 0.7746);
    const base = detail({ stepResults: allPassing(), verdict: 'pass' });
    const point = { id: 1, sequence: 1, position: 4.5, recordedAt: '2026-11-30T09:50:00.000Z', settled: true, inFit: true, confirmedAt: null, stimulusHz: 14, reading: readingWithThd(-66) };
    const withCalibration = runDetailSchema.parse({
      ...base,
      trimPoints: [point],
      calibration: { id: 3, madeAt: '2026-11-29T08:00:00.000Z', operator: 'B. Cal', expiresAt: '2026-12-29T08:00:00.000Z', inputDbuAtFullScale: inputDbu, outputDbuAtFullScale: 8, chainFloor: null },
    });
    const sheet = buildSheetModel(withCalibration);
    // The reading's fundamental is −12 dBFS: 1.5492 V·10^(−12/20) = 0.3890 V RMS = −5.98 dBu.
    const volts = fullScaleVrms * 10 ** (-12 / 20);
    const expectedDbu = 20 * Math.log10(volts / 0.7746);
    expect(sheet.trim!.points[0].fundamental).toBe(`−${Math.abs(expectedDbu).toFixed(2)} (−12.00)`);
    expect(sheet.trim!.fundamentalHeading).toBe('Fundamental, dBu (dBFS)');
    expect(sheet.calibration).toMatchObject({ used: true, levels: '0 dBFS = +6.0 dBu in, +8.0 dBu out' });
    // A two-channel unit's channel 2 read on input 2 with its own figure: the sheet names it beside the first.
    const twoInputs = runDetailSchema.parse({ ...withCalibration, calibration: { ...withCalibration.calibration, secondInput: { channel: 1, dbuAtFullScale: 9 } } });
    expect(buildSheetModel(twoInputs).calibration).toMatchObject({ levels: '0 dBFS = +6.0 dBu in (input 2, channel 2: +9.0 dBu), +8.0 dBu out' });
  });

  it('a run finished before step results were kept keeps its stored verdict, its steps “not recorded”', () => {
    const sheet = buildSheetModel(detail({ stepResults: [], verdict: 'pass', walked: false }));
    expect(sheet.verdict).toMatchObject({ text: 'PASS', discrepancy: null });
    expect(new Set(sheet.steps.map((s) => s.statusText))).toEqual(new Set(['not recorded']));
    expect(sheet.stepsNote).toMatch(/before results were kept step by step/);
    // A run of today finished as FAIL with no step recorded is not dressed up as an old one.
    const today = buildSheetModel(detail({ stepResults: [], verdict: 'fail', reasons: ['Finished as FAIL by the technician.'] }));
    expect(today.stepsNote ?? '').not.toMatch(/before results were kept/);
    expect(today.verdict.discrepancy).toBeNull();
    // Every step passed, finished as FAIL on purpose: main's own verdict, not a changed record.
    const onPurpose = buildSheetModel(detail({ stepResults: allPassing(), verdict: 'fail', reasons: ['Finished as FAIL by the technician, although every step met its conditions for a pass.'] }));
    expect(onPurpose.verdict).toMatchObject({ text: 'FAIL', discrepancy: null });
  });
});
