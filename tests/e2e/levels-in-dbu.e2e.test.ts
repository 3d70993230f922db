// A calibrated station in the real renderer: the live readout shows the unit's level in dBu beside
// dBFS, readings near the chain's own residual are flagged at-floor (and stay flagged once
// recorded), and the unit sheet names the calibration and the chain floor it was measured with.
// The station is calibrated through main's own handlers, as the Station view would.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { copyFileSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { CHAIN_CHECK_SCHEMA_VERSION } from '../../shared/calibration/chain-check.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { acknowledgeNotice, openBench, type Bench, POLL } from '../harness/bench-harness.ts';
import { readingWithThd, startUnit } from '../support/station.ts';

const SHOTS = join(process.cwd(), 'out', 'screenshots');

// The calibration, as a technician would have made it on the demo bench (the demo capture runs at 48 kHz).
const SETUP = {
  inputDeviceId: 'demo-bench',
  inputDeviceLabel: 'Demo bench',
  inputChannel: 0,
  outputDeviceId: '',
  outputDeviceLabel: 'Default output',
  sampleRateHz: 48000,
};
// Output: a −20 dBFS tone reads 0.7746 V on the voltmeter, which is 0 dBu (0 dBu = √0.6 V = 0.7746 V RMS,
// the 600 Ω / 1 mW definition), so 0 dBFS out is +20 dBu.
// Input by loopback: that −20 dBFS tone (0 dBu at the terminals) is captured at −22 dBFS, so a
// level captured at L dBFS is L + 22 dBu at the input terminals.
const EXPECTED_INPUT_DBU_AT_FULL_SCALE = 0 - -22;
const EXPECTED_OUTPUT_DBU_AT_FULL_SCALE = 0 - -20;
// An invented, poor chain at the demo's 14 Hz: residual THD −70 dB. Readings within 6 dB of it are at the floor.
const RESIDUAL_THD_DB = -70;
const OPERATOR = 'C. Calibrator';

const noPrinter: CallerContext = { printToPdf: async () => new Uint8Array(), print: async () => false, chooseProcedureFile: async () => null };

let bench: Bench;
beforeAll(async () => {
  mkdirSync(SHOTS, { recursive: true });
  bench = await openBench({ captureWav: null });
  const calibrated = await dispatch(
    bench.station.handlers,
    'recordCalibration',
    {
      operator: OPERATOR,
      setup: SETUP,
      output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' },
      input: { method: 'loopback', generatorDbfs: -20, capturedDbfs: -22, capturedHz: 1000 },
    },
    noPrinter,
  );
  if (!calibrated.ok) throw new Error(calibrated.error.message);
  const calibration = (calibrated.value as { calibration: { id: number } }).calibration;
  const checked = await dispatch(
    bench.station.handlers,
    'recordChainCheck',
    {
      calibrationId: calibration.id,
      operator: OPERATOR,
      result: {
        schemaVersion: CHAIN_CHECK_SCHEMA_VERSION,
        measuredAt: new Date().toISOString(),
        sampleRateHz: 48000,
        inputDbuAtFullScale: null,
        residuals: [{ frequencyHz: DEMO_PROCEDURE.trim.stimulusHz, generatorDbfs: DEMO_PROCEDURE.trim.stimulusLevelDbfs, thdDb: RESIDUAL_THD_DB, thdnDb: -68 }],
        noiseFloor: { bandLowHz: 20, bandHighHz: 20000, unweightedDbfs: -110, aWeightedDbfs: -112, unweightedDbu: null, aWeightedDbu: null },
        response: null,
        responseRefusal: 'Not measured in this test.',
        latency: null,
        latencyRefusal: 'Not measured in this test.',
      },
    },
    noPrinter,
  );
  if (!checked.ok) throw new Error(checked.error.message);
});
afterAll(() => bench?.close());

const number = (text: string | null) => Number(text!.trim().replace('−', '-').replace('+', ''));
const readingOf = async (page: Page) => JSON.parse((await page.getByTestId('reading-json').getAttribute('data-reading'))!) as { sequence: number; settled: boolean; thdDb: number; flags: string[] };

async function settledAfter(page: Page, afterSequence: number) {
  await page.waitForFunction(
    (after) => {
      const reading = JSON.parse(document.querySelector('[data-testid=reading-json]')?.getAttribute('data-reading') ?? '{}');
      return reading.settled === true && reading.sequence > after;
    },
    afterSequence,
    { timeout: 45_000 },
  );
}

describe('levels in dBu on a calibrated station', () => {
  it('shows dBu in the readout, flags readings at the chain’s floor, and the sheet names the calibration', { timeout: 300_000 }, async () => {
    const page = await bench.openApp();
    await expect.poll(() => page.getByTestId('input-select').inputValue(), POLL).toBe('demo-bench');
    await page.getByRole('button', { name: 'Start capture' }).click();
    await page.getByLabel('Operator').fill('A. Tester');
    await page.getByTestId('serial-input').fill('MG20-2611-0123');
    await page.getByTestId('serial-input').press('Enter');
    await acknowledgeNotice(page);
    await page.getByTestId('trim-generator-toggle').click();
    await settledAfter(page, 0);

    // The readout: dBu is dBFS plus the input's +22 dBu at 0 dBFS (both shown to 0.01 dB, so they differ by rounding at most).
    const dbu = number(await page.getByTestId('fundamental-dbu').textContent());
    const dbfs = number(await page.getByTestId('fundamental-level').textContent());
    expect(Math.abs(dbu - (dbfs + EXPECTED_INPUT_DBU_AT_FULL_SCALE))).toBeLessThanOrEqual(0.011);
    expect(await page.getByTestId('noise').textContent()).toMatch(/dBFS \([−+]?\d+\.\d dBu\)/);
    // The stimulus is an output level: −12 dBFS out is −12 + 20 = +8 dBu.
    expect(await page.getByTestId('trim-generator').textContent()).toContain(`(+${(DEMO_PROCEDURE.trim.stimulusLevelDbfs + EXPECTED_OUTPUT_DBU_AT_FULL_SCALE).toFixed(1)} dBu)`);
    await page.locator('section.readout').screenshot({ path: join(SHOTS, 'levels-readout-dbu.png') });

    // Trim toward the null until a point at the chain's floor is recorded (the demo unit's H3 falls well below −64 dB there).
    const rows = page.getByTestId('trim-points').locator('tbody tr');
    let sawAtFloorNote = false;
    for (let i = 0; i < 10; i++) {
      if (i > 0) await page.getByTestId('use-next').click();
      const before = await rows.count();
      await settledAfter(page, (await readingOf(page)).sequence + 12);
      const live = await readingOf(page);
      // The live flag follows the rule: within 6 dB of the residual (10·log10 4 = 6.02 dB: the chain is at least a quarter of the power).
      expect(live.flags.includes('at-floor')).toBe(live.thdDb <= RESIDUAL_THD_DB + 6);
      if (live.flags.includes('at-floor')) {
        expect(await page.getByTestId('at-floor-note').textContent()).toMatch(/At the station’s floor/);
        if (!sawAtFloorNote) await page.locator('section.readout').screenshot({ path: join(SHOTS, 'levels-readout-at-floor.png') });
        sawAtFloorNote = true;
      }
      await page.getByTestId('position-input').press('Enter');
      await expect.poll(() => rows.count(), { timeout: 10_000 }).toBe(before + 1);
      if (sawAtFloorNote) break;
    }
    expect(sawAtFloorNote).toBe(true);
    // The trim step's table: levels in dBu (dBFS) and the at-floor mark on the point just recorded.
    expect(await page.getByTestId('trim-points').locator('thead').textContent()).toContain('Level, dBu / dBFS');
    expect(await page.getByTestId('trim-at-floor-note').isVisible()).toBe(true);
    await page.locator('section.trim').screenshot({ path: join(SHOTS, 'levels-trim-step.png') });

    // Main kept each recorded point's flag as the meter set it.
    const stored = bench.station.db.prepare('SELECT reading_json FROM trim_points ORDER BY sequence').all() as { reading_json: string }[];
    // Stored wrapped with its shape's version ({ v, value }, electron/services/stored-record.ts).
    const storedReadings = stored.map((row) => (JSON.parse(row.reading_json) as { value: { thdDb: number; flags: string[] } }).value);
    const flagged = storedReadings.filter((r) => r.flags.includes('at-floor'));
    expect(flagged.length).toBeGreaterThan(0);
    for (const r of flagged) expect(r.thdDb).toBeLessThanOrEqual(RESIDUAL_THD_DB + 6);

    await page.getByTestId('finish-run').click();
    // The point at the floor may not be a pass: either way the sheet is made.
    const refusal = page.getByTestId('finish-as-fail');
    await Promise.race([
      refusal.waitFor({ timeout: 20_000 }).then(() => refusal.click()),
      page.getByTestId('sheet-pdf-path').waitFor({ timeout: 20_000 }),
    ]);
    await expect.poll(() => page.getByTestId('sheet-pdf-path').textContent(), { timeout: 20_000 }).toMatch(/^Saved as /);
    await page.locator('article.sheet').screenshot({ path: join(SHOTS, 'levels-sheet.png') });
    const pdfPath = (await page.getByTestId('sheet-pdf-path').textContent())!.replace(/^Saved as /, '');
    // Kept beside the screenshots to look at (the bench's data folder goes with it).
    copyFileSync(pdfPath, join(SHOTS, 'levels-sheet.pdf'));
    execFileSync('pdftoppm', ['-png', '-r', '70', pdfPath, join(SHOTS, 'levels-sheet-pdf')]);
    // Reading order without layout, lines joined: a value the page wraps still reads as one phrase.
    const text = execFileSync('pdftotext', [pdfPath, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    expect(text).toContain('MG20-2611-0123');
    // Labels and values come out in separate runs of text: each checked on its own.
    expect(text).toContain('Calibration');
    expect(text).toContain('Chain floor');
    expect(text).toMatch(new RegExp(`No\\. 1 by ${OPERATOR.replace('.', '\\.')} on \\d{4}-\\d\\d-\\d\\d, expires \\d{4}-\\d\\d-\\d\\d`));
    expect(text).toContain(`0 dBFS = +${EXPECTED_INPUT_DBU_AT_FULL_SCALE.toFixed(1)} dBu in, +${EXPECTED_OUTPUT_DBU_AT_FULL_SCALE.toFixed(1)} dBu out`);
    expect(text).toContain('residual THD −70.0 dB at 14 Hz');
    // The chain's A-weighted noise in dBu: −112 dBFS captured + 22 dBu at 0 dBFS = −90 dBu.
    expect(text).toContain('noise −90.0 dBu A-weighted');
    expect(text).toContain('Fundamental, dBu (dBFS)');
    expect(text).toContain('† At the station’s floor');
    // Still one A4 page with the calibration added.
    const pages = execFileSync('pdfinfo', [pdfPath], { encoding: 'utf8' });
    expect(pages).toMatch(/Pages:\s+1\n/);
  });

  it('keeps a ten-point calibrated run, every point marked at the floor, on one A4 page', { timeout: 90_000 }, async () => {
    // Points on the phasor model of design §5 (H3 = s·(p − p0) + j·f): null at 5 turns, −40 dBc at
    // the safe end, −75 dBc at the null; each marked at-floor for the longest sheet (the note and the marks).
    const serial = 'MG20-2611-0124';
    const procedureId = bench.station.records.listProcedures()[0]!.id;
    const { run } = startUnit(bench.station.records, { serial, procedureId, operator: 'A. Tester' });
    for (const position of [0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4, 4.5]) {
      const re = (10 ** (-40 / 20) / 5) * (position - 5);
      const f = 10 ** (-75 / 20);
      const levelDbc = 20 * Math.log10(Math.hypot(re, f));
      const reading = readingWithThd(levelDbc, { flags: ['at-floor'] });
      reading.harmonics = [{ order: 3, frequencyHz: 42, levelDbc, phaseDeg: (Math.atan2(f, re) * 180) / Math.PI }];
      bench.station.records.recordTrimPoint({ runId: run.id, position, reading, live: null, stimulus: { on: true, frequencyHz: 14, levelDbfs: -12 }, setup: SETUP });
    }
    const page = await bench.openApp();
    await page.getByLabel('Operator').fill('A. Tester');
    await page.getByTestId('serial-input').fill(serial);
    await page.getByTestId('serial-input').press('Enter');
    await acknowledgeNotice(page);
    await expect.poll(() => page.getByTestId('trim-points').locator('tbody tr').count(), POLL).toBe(10);
    await page.getByTestId('finish-run').click();
    await page.getByTestId('finish-as-fail').click(); // all short of the null: no recommendation, no pass
    await expect.poll(() => page.getByTestId('sheet-pdf-path').textContent(), { timeout: 20_000 }).toMatch(/^Saved as /);
    const pdfPath = (await page.getByTestId('sheet-pdf-path').textContent())!.replace(/^Saved as /, '');
    copyFileSync(pdfPath, join(SHOTS, 'levels-sheet-ten-points.pdf'));
    execFileSync('pdftoppm', ['-png', '-r', '70', pdfPath, join(SHOTS, 'levels-sheet-ten-points')]);
    expect(execFileSync('pdfinfo', [pdfPath], { encoding: 'utf8' })).toMatch(/Pages:\s+1\n/);
    const text = execFileSync('pdftotext', [pdfPath, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    expect(text).toContain('No. 1 by C. Calibrator');
    expect(text.match(/ †/g)?.length).toBe(10 + 1 + 1); // ten marked points, the final reading's line and the note
  });
});
