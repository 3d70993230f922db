// capture-check: plays a WAV file into the real renderer as its microphone (in the browser bench)
// and prints the settled live reading. It checks the whole live path — capture, worker, readout —
// against a file whose content is known.
//
//   npm run -s capture-check -- FILE.wav [--channel N] [--mains 50|60] [--json]

import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, join, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { decodeWav, encodeWavFloat32, WavFormatError } from '../../shared/audio/wav.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { openBench } from './bench-harness.ts';

const SETTLE_TIMEOUT_MS = 60_000;
// A file that plays silence (or a wrong channel) is reported once the readings have said so this long.
const NO_SIGNAL_GIVE_UP_MS = 5_000;
// Chromium's fake capture device plays mono or stereo files; other layouts are reduced to the chosen channel.
const MAX_FAKE_CHANNELS = 2;

class CheckFailure extends Error {}

interface Options {
  file: string;
  channel: number;
  mains: 50 | 60;
  json: boolean;
}

function parseOptions(argv: string[]): Options {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    strict: true,
    options: {
      channel: { type: 'string', default: '0' },
      mains: { type: 'string', default: '50' },
      json: { type: 'boolean', default: false },
    },
  });
  if (positionals.length !== 1) throw new CheckFailure('usage: capture-check FILE.wav [--channel N] [--mains 50|60] [--json]');
  const channel = Number(values.channel);
  if (!Number.isInteger(channel) || channel < 0) throw new CheckFailure(`--channel must be a whole number ≥ 0, got “${values.channel}”`);
  if (values.mains !== '50' && values.mains !== '60') throw new CheckFailure(`--mains must be 50 or 60, got “${values.mains}”`);
  return { file: resolve(positionals[0]), channel, mains: Number(values.mains) as 50 | 60, json: values.json };
}

/** Rewrites the file as 32-bit float (the format the fake device reads exactly); returns the UI channel to pick. */
function prepareCaptureFile(options: Options, workDir: string): { path: string; uiChannel: number } {
  let bytes: Uint8Array;
  try {
    bytes = readFileSync(options.file);
  } catch (error) {
    throw new CheckFailure(`${options.file}: cannot be read (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`);
  }
  let wav;
  try {
    wav = decodeWav(bytes);
  } catch (error) {
    if (error instanceof WavFormatError) throw new CheckFailure(`${options.file}: ${error.message}`);
    throw error;
  }
  if (options.channel >= wav.channels.length) {
    throw new CheckFailure(`${options.file}: has ${wav.channels.length} channel(s); --channel ${options.channel} does not exist`);
  }
  const path = join(workDir, `${basename(options.file, '.wav')}-f32.wav`);
  if (wav.channels.length <= MAX_FAKE_CHANNELS) {
    writeFileSync(path, encodeWavFloat32(wav.channels, wav.sampleRateHz));
    return { path, uiChannel: options.channel };
  }
  const chosen = wav.channels[options.channel];
  writeFileSync(path, encodeWavFloat32([chosen, chosen], wav.sampleRateHz));
  return { path, uiChannel: 0 };
}

async function measure(options: Options): Promise<Reading> {
  const workDir = mkdtempSync(join(tmpdir(), 'trimbench-capture-check-'));
  try {
    const capture = prepareCaptureFile(options, workDir);
    const bench = await openBench({ captureWav: capture.path });
    try {
      const page = await bench.openApp();
      await page.getByLabel('Input channel carrying the unit').selectOption(String(capture.uiChannel));
      await page.getByLabel('Mains frequency (for hum)').selectOption(String(options.mains));
      await page.getByRole('button', { name: 'Start capture' }).click();
      const deadline = Date.now() + SETTLE_TIMEOUT_MS;
      let last: Reading | null = null;
      let silentSince: number | null = null;
      while (Date.now() < deadline) {
        const problem = page.getByTestId('audio-problem');
        if (await problem.count()) throw new CheckFailure(`${options.file}: ${await problem.textContent()}`);
        const json = await page.getByTestId('reading-json').getAttribute('data-reading', { timeout: 1000 }).catch(() => null);
        last = json ? (JSON.parse(json) as Reading) : last;
        // A quiet input settles too (on its noise): only a settled reading of a tone is the check's answer.
        if (last?.settled && !last.flags.includes('no-signal')) return last;
        silentSince = last?.flags.includes('no-signal') ? (silentSince ?? Date.now()) : null;
        if (silentSince !== null && Date.now() - silentSince > NO_SIGNAL_GIVE_UP_MS) {
          throw new CheckFailure(`${options.file}: no signal on channel ${options.channel}`);
        }
        await page.waitForTimeout(200);
      }
      throw new CheckFailure(
        `${options.file}: no settled reading within ${SETTLE_TIMEOUT_MS / 1000} s (${last ? 'readings kept changing' : 'no reading arrived'})`,
      );
    } finally {
      await bench.close();
    }
  } finally {
    rmSync(workDir, { recursive: true, force: true });
  }
}

function asJson(reading: Reading) {
  return {
    fundamental: { frequencyHz: reading.fundamental.frequencyHz, levelDbfs: reading.fundamental.levelDbfs },
    harmonics: reading.harmonics.map(({ order, levelDbc, phaseDeg }) => ({ order, levelDbc, phaseDeg })),
    thdPercent: reading.thdPercent,
    thdDb: reading.thdDb,
    flags: reading.flags,
  };
}

function asTable(options: Options, reading: Reading): string {
  const lines = [
    `${options.file}, channel ${options.channel}`,
    `fundamental  ${reading.fundamental.frequencyHz.toFixed(3)} Hz  ${reading.fundamental.levelDbfs.toFixed(2)} dBFS`,
    `THD          ${reading.thdPercent.toPrecision(4)} %  ${reading.thdDb.toFixed(2)} dB`,
    'order   level dBc   phase °',
    ...reading.harmonics.map((h) => `H${String(h.order).padEnd(5)} ${h.levelDbc.toFixed(2).padStart(10)} ${h.phaseDeg.toFixed(1).padStart(9)}`),
  ];
  if (reading.flags.length) lines.push(`flags: ${reading.flags.join(', ')}`);
  return lines.join('\n');
}

async function main(): Promise<number> {
  let options: Options;
  try {
    options = parseOptions(process.argv.slice(2));
    const reading = await measure(options);
    process.stdout.write(options.json ? `${JSON.stringify(asJson(reading))}\n` : `${asTable(options, reading)}\n`);
    return 0;
  } catch (error) {
    const message = error instanceof CheckFailure || (error as { code?: string }).code?.startsWith('ERR_PARSE_ARGS')
      ? (error as Error).message
      : `failed: ${(error as Error).message.split('\n')[0]}`;
    process.stderr.write(`capture-check: ${message}\n`);
    return 1;
  }
}

process.exitCode = await main();
