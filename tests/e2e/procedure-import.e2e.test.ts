// Issue 10: importing the line's own procedure file in the real renderer, from the Station view.
// Main opens the file dialog (stood in for by the harness) and checks the file whole; the rules of
// docs/procedures.md apply (a new revision is stored and used by new runs; the same file again
// changes nothing; problems are named with their place in the file).

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { openBench, POLL, type Bench } from '../harness/bench-harness.ts';

const RESOURCE = fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url));
let bench: Bench | null = null;
afterAll(async () => {
  await bench?.close();
});

describe('importing a procedure in the app', () => {
  it('imports the demo file with its checks as revision E once, names problems of a broken file, and the bench offers the new revision', async () => {
    bench = await openBench({ captureWav: null });
    const page = await bench.openApp();
    await page.getByTestId('open-station').click();
    const message = page.getByTestId('import-message');

    // The demo file with its check steps: imported whole. Pressed twice in a hurry: one import.
    const demoFile = JSON.parse(readFileSync(RESOURCE, 'utf8'));
    bench.procedureFileChoice.path = RESOURCE;
    await page.getByTestId('import-procedure').click();
    await page.getByTestId('import-procedure').click({ force: true }).catch(() => {});
    await expect.poll(() => message.textContent(), POLL).toMatch(/Imported MG20-LF-TRIM revision E|already stored exactly/);
    await expect.poll(() => page.getByTestId('procedure-revisions').textContent(), POLL).toMatch(/MG20-LF-TRIM rev E\s*new runs use it · 0 runs/);
    // The view lists both revisions; from the keyboard, the arrow keys move between them and Enter
    // shows one's steps with their limits (the trim's limit from the file: THD ≤ −60 dB).
    await page.locator('button[data-revision]').last().focus();
    await page.keyboard.press('ArrowUp');
    await page.keyboard.press('Enter');
    await expect.poll(() => page.getByTestId('procedure-steps').locator('h3').textContent(), POLL).toMatch(/^MG20-LF-TRIM revision B/);
    await page.keyboard.press('ArrowDown');
    await page.keyboard.press('Enter');
    await expect.poll(() => page.getByTestId('procedure-steps').locator('h3').textContent(), POLL).toMatch(/^MG20-LF-TRIM revision E/);
    expect(await page.getByTestId('procedure-steps').locator('tbody tr').count()).toBe(demoFile.steps.length);
    expect(await page.getByTestId('procedure-steps').textContent()).toContain('THD ≤ −60.0 dB at the final trim point');
    const rows = (bench.station.db.prepare("SELECT COUNT(*) AS n FROM procedures WHERE code = 'MG20-LF-TRIM'").get() as { n: number }).n;
    expect(rows).toBe(2); // the built-in revision B and the imported C

    const broken = structuredClone(demoFile);
    broken.revision = 'F';
    broken.steps[1].limitThdDb = 'low';
    const brokenPath = join(tmpdir(), 'trimbench-broken-procedure.json');
    writeFileSync(brokenPath, JSON.stringify(broken));
    bench.procedureFileChoice.path = brokenPath;
    await page.getByTestId('import-procedure').click();
    await expect.poll(() => message.textContent(), POLL).toMatch(/trimbench-broken-procedure\.json was not imported.*steps\[1\]\.limitThdDb/s);
    await page.screenshot({ path: join(tmpdir(), 'trimbench-procedures.png'), fullPage: true });

    await page.getByTestId('station-back').click();
    await expect.poll(() => page.getByLabel('Procedure').locator('option').allTextContents(), POLL).toEqual(['MG20-LF-TRIM rev E']);
  }, 120_000);
});
