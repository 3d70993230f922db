// The audio problems a technician meets, each with its message, in the real renderer.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { acknowledgeNotice, openBench, type Bench, POLL } from '../harness/bench-harness.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { tempDir } from '../support/station.ts';
import { writeToneWav } from '../support/wav-files.ts';

const TONE = { frequencyHz: 997, levelDbfs: -10, partials: [{ order: 3, levelDbc: -60, phaseDeg: 0 }] };
// The unit's answer to the demo procedure's stimulus (shared/procedures/demo-procedure.ts, invented:
// 14 Hz at −12 dBFS, captured within −15..−9 dBFS): the only kind of reading a trim point may hold.
// 1 s holds 14 whole cycles at 44.1 kHz, the fake device's rate, so the loop has no seam.
const ANSWER = { frequencyHz: 14, levelDbfs: -12, partials: [{ order: 3, levelDbc: -60, phaseDeg: 0 }] };

let files: ReturnType<typeof tempDir>;
beforeAll(() => {
  files = tempDir('trimbench-e2e-problems-');
});
afterAll(() => files.remove());

async function withBench(wav: string | null, body: (bench: Bench) => Promise<void>, microphone: 'granted' | 'denied' = 'granted') {
  const bench = await openBench({ captureWav: wav, microphone });
  try {
    await body(bench);
  } finally {
    await bench.close();
  }
}

const problem = (page: Page) => page.getByTestId('audio-problem');
const startCapture = (page: Page) => page.getByRole('button', { name: 'Start capture' }).click();

async function latestReading(page: Page): Promise<Reading> {
  await expect.poll(() => page.getByTestId('reading-json').count(), { timeout: 15_000 }).toBe(1);
  return JSON.parse((await page.getByTestId('reading-json').getAttribute('data-reading'))!) as Reading;
}

describe('audio problems', () => {
  it('permission refused', async () => {
    await withBench(
      writeToneWav(join(files.path, 'refused.wav'), TONE),
      async (bench) => {
        const page = await bench.openApp();
        await startCapture(page);
        await expect.poll(() => problem(page).textContent(), POLL).toMatch(/Permission to use the audio input was refused/);
      },
      'denied',
    );
  });

  it('signal absent', async () => {
    const wav = writeToneWav(join(files.path, 'silence.wav'), { frequencyHz: 1000, levelDbfs: -200 });
    await withBench(wav, async (bench) => {
      const page = await bench.openApp();
      await startCapture(page);
      // Muted by design: silence is expected, said calmly, and nothing is said of a fundamental.
      await expect.poll(() => page.getByTestId('generator-off-note').isVisible(), { timeout: 15_000 }).toBe(true);
      expect(await page.getByRole('alert').allTextContents()).not.toContainEqual(expect.stringMatching(/No signal/));
      expect(await page.getByTestId('reading-details').textContent()).not.toMatch(/fundamental found/);
      // A quiet placeholder, not a bold dash, where there is no number.
      expect(await page.getByTestId('fundamental-level').textContent()).toBe('no reading');
      expect(await page.getByTestId('thd-db').textContent()).toBe('no reading');
      // With the generator on, silence is a problem.
      await page.getByLabel('Operator').fill('A. Tester');
      await page.getByTestId('serial-input').fill('MG20-2611-0042');
      await page.getByTestId('serial-input').press('Enter');
      // The safety notice is read with the generator off (docs/procedures.md: safety first): the note
      // says it stays off, not to turn it on.
      await expect.poll(() => page.getByTestId('generator-off-note').textContent(), { timeout: 15_000 }).toMatch(/stays off for this step/);
      await acknowledgeNotice(page);
      // The trim plays a tone: now the note asks for it.
      await expect.poll(() => page.getByTestId('generator-off-note').textContent(), { timeout: 15_000 }).toMatch(/Turn it on/);
      await page.getByTestId('position-input').press('g');
      // Said by the shared stimulus check now (the one main applies before recording), whose wording
      // names the causes rather than "the input channel": the check is that silence is called out.
      await expect.poll(() => page.getByRole('alert').allTextContents(), { timeout: 15_000 }).toContainEqual(
        expect.stringMatching(/No signal at the input/),
      );
    });
  });

  it('input clipping', async () => {
    // A sine at 1.5 × full scale, clipped flat at ±1.0 as an overdriven converter would.
    const wav = writeToneWav(join(files.path, 'clipped.wav'), { frequencyHz: 1000, levelDbfs: 20 * Math.log10(1.5) });
    await withBench(wav, async (bench) => {
      const page = await bench.openApp();
      await startCapture(page);
      await expect.poll(() => page.getByRole('alert').allTextContents(), { timeout: 15_000 }).toContainEqual(
        expect.stringMatching(/The input is clipping/),
      );
    });
  });

  describe('with a tone at the input', () => {
    let bench: Bench;
    beforeAll(async () => {
      bench = await openBench({ captureWav: writeToneWav(join(files.path, 'tone.wav'), TONE) });
    });
    afterAll(() => bench.close());

    async function freshPage(beforeLoad?: (page: Page) => Promise<unknown>): Promise<Page> {
      if (!bench.page.isClosed()) await bench.page.close();
      return bench.openApp(beforeLoad);
    }

    it('refuses to measure when the browser keeps echo cancellation on', async () => {
      const page = await freshPage((p) =>
        p.addInitScript(() => {
          const open = navigator.mediaDevices.getUserMedia.bind(navigator.mediaDevices);
          navigator.mediaDevices.getUserMedia = async (constraints) => {
            const stream = await open(constraints);
            const track = stream.getAudioTracks()[0];
            const settings = track.getSettings.bind(track);
            track.getSettings = () => ({ ...settings(), echoCancellation: true });
            return stream;
          };
        }),
      );
      await startCapture(page);
      await expect.poll(() => problem(page).textContent(), POLL).toMatch(/kept echo cancellation on .* Nothing is measured/);
      expect(await page.getByTestId('capture-status').count()).toBe(0);
    });

    it('measures through the worklet path where MediaStreamTrackProcessor is missing', async () => {
      const page = await freshPage((p) =>
        p.addInitScript(() => {
          delete (globalThis as { MediaStreamTrackProcessor?: unknown }).MediaStreamTrackProcessor;
        }),
      );
      await startCapture(page);
      await expect.poll(() => page.getByTestId('capture-status').getAttribute('data-capture-path'), POLL).toBe('worklet');
      // How samples arrive is not the technician's business: no internal names on screen.
      expect(await page.getByTestId('capture-status').textContent()).not.toMatch(/worklet|track processor/i);
      await page.waitForFunction(
        () => JSON.parse(document.querySelector('[data-testid=reading-json]')?.getAttribute('data-reading') ?? '{}').settled === true,
        undefined,
        { timeout: 20_000 },
      );
      const reading = await latestReading(page);
      expect(Math.abs(reading.fundamental.levelDbfs - TONE.levelDbfs)).toBeLessThan(0.5);
      expect(Math.abs(reading.harmonics.find((h) => h.order === 3)!.levelDbc - -60)).toBeLessThan(0.5);
    });

    it('Esc mutes the generator from anywhere, even while typing', async () => {
      const page = await freshPage();
      await startCapture(page);
      // The stimulus is set by opening a unit (its procedure); then the generator can be turned on.
      await page.getByLabel('Operator').fill('A. Tester');
      await page.getByTestId('serial-input').fill('MG20-2611-0076');
      await page.getByTestId('serial-input').press('Enter');
      await acknowledgeNotice(page);
      await page.getByTestId('generator-toggle').click();
      await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Mute generator (Esc)');
      await page.getByTestId('position-input').focus();
      await page.keyboard.press('Escape');
      await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');
      await page.getByTestId('generator-toggle').click();
      await page.getByTestId('mute').click();
      await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Generator muted');
    });

    it('device unplugged during capture: message, generator stopped, recorded points kept', async () => {
      // Its own station: a point can be recorded only from the unit's answer to the stimulus.
      await withBench(writeToneWav(join(files.path, 'answer.wav'), ANSWER), async (answering) => {
        const page = await answering.openApp((p) =>
          p.addInitScript(() => {
            const open = navigator.mediaDevices.getUserMedia.bind(navigator.mediaDevices);
            navigator.mediaDevices.getUserMedia = async (constraints) => {
              const stream = await open(constraints);
              (window as unknown as { capturedTrack: MediaStreamTrack }).capturedTrack = stream.getAudioTracks()[0];
              return stream;
            };
          }),
        );
        await startCapture(page);
        await page.getByLabel('Operator').fill('A. Tester');
        await page.getByTestId('serial-input').fill('MG20-2611-0077');
        await page.getByTestId('serial-input').press('Enter');
        await acknowledgeNotice(page);
        await page.getByTestId('generator-toggle').click();
        await expect.poll(() => page.getByTestId('mute').textContent(), POLL).toBe('Mute generator (Esc)');
        await page.getByTestId('position-input').fill('1');
        const typedAt = (await latestReading(page)).sequence;
        await page.waitForFunction(
          (after) => {
            const reading = JSON.parse(document.querySelector('[data-testid=reading-json]')?.getAttribute('data-reading') ?? '{}');
            return reading.settled === true && reading.sequence > after;
          },
          typedAt + 12,
          { timeout: 20_000 },
        );
        await page.getByTestId('position-input').press('Enter');
        const rows = page.getByTestId('trim-points').locator('tbody tr');
        await expect.poll(() => rows.count(), POLL).toBe(1);

        // What the browser does when an interface is unplugged: the track ends.
        await page.evaluate(() => {
          const track = (window as unknown as { capturedTrack: MediaStreamTrack }).capturedTrack;
          track.stop();
          track.dispatchEvent(new Event('ended'));
        });
        await expect.poll(() => problem(page).textContent(), POLL).toMatch(/input device was disconnected/);
        expect(await page.getByTestId('mute').textContent()).toBe('Generator muted');
        expect(await rows.count()).toBe(1);
        const stored = answering.station.db.prepare('SELECT COUNT(*) AS n FROM trim_points JOIN runs ON runs.id = run_id').get() as { n: number };
        expect(stored.n).toBe(1);
      });
    });
  });
});
