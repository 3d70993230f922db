// `sweep` writes the exponential sweep the generator plays; `response` reads a capture of it and
// prints the unit's frequency response and harmonic distortion. Both by shared/ code
// (shared/dsp/log-sweep.ts, shared/measurement/sweep-response.ts), as the app will.

import { writeFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { encodeWavFloat32 } from '../shared/audio/wav.ts';
import { LOG_SWEEP_SILENCE_AFTER_S, LOG_SWEEP_SILENCE_BEFORE_S, logSweep, logSweepLayout, type LogSweepSpec } from '../shared/dsp/log-sweep.ts';
import { RESPONSE_REFERENCE_HZ } from '../shared/calibration/chain-response.ts';
import { analyzeSweepResponse, SWEEP_CAPTURE_MAX_SAMPLES, type SweepResponse } from '../shared/measurement/sweep-response.ts';
import { fileProblem, joinNegativeValues, numberOption, openWavForCommand, refuseNonFinite, UsageProblem } from './cli-input.ts';

const SPEC_OPTIONS = '--from HZ --to HZ --seconds S --rate HZ --level-dbfs L';

export const SWEEP_COMMANDS_USAGE = `  trimbench sweep --write OUT.wav ${SPEC_OPTIONS}
  trimbench response CAPTURE.wav ${SPEC_OPTIONS} [--reference-hz HZ] [--channel N] [--json]`;

export const SWEEP_COMMANDS_HELP = `  sweep     writes the exponential sine sweep (Farina) as a mono 32-bit float WAV: ${LOG_SWEEP_SILENCE_BEFORE_S} s of
            silence, the sweep at full level from --from to --to Hz over --seconds S at --level-dbfs L
            (0 dBFS is a full-scale sine), faded in and out a twelfth of an octave beyond each end,
            then ${LOG_SWEEP_SILENCE_AFTER_S} s of silence; the same samples the generator plays
  response  the frequency response (relative to --reference-hz, default ${RESPONSE_REFERENCE_HZ} Hz; phase with the
            latency removed) and harmonics H2–H5 against the fundamental's frequency, from a
            capture of that sweep at any latency (found from the capture); give the parameters
            the sweep was written with`;

const SPEC_PARSE_OPTIONS = {
  from: { type: 'string' },
  to: { type: 'string' },
  seconds: { type: 'string' },
  rate: { type: 'string' },
  'level-dbfs': { type: 'string' },
} as const;

/** The sweep's parameters from the options; every one is needed, since the capture is matched against exactly these. */
function sweepSpec(command: string, values: Partial<Record<keyof typeof SPEC_PARSE_OPTIONS, string>>): LogSweepSpec {
  const startHz = numberOption('from', values.from, (v) => v > 0, 'a frequency in Hz above 0');
  const endHz = numberOption('to', values.to, (v) => v > 0, 'a frequency in Hz above 0');
  const durationS = numberOption('seconds', values.seconds, (v) => v > 0, 'a duration in seconds above 0');
  const sampleRateHz = numberOption('rate', values.rate, (v) => Number.isInteger(v) && v >= 8000 && v <= 768000, 'a sample rate in Hz, a whole number from 8000 to 768000');
  const levelDbfs = numberOption('level-dbfs', values['level-dbfs'], (v) => v <= 0 && v >= -120, 'a level in dBFS from -120 to 0');
  if (startHz === undefined || endHz === undefined || durationS === undefined || sampleRateHz === undefined || levelDbfs === undefined) {
    const missing = Object.keys(SPEC_PARSE_OPTIONS).filter((name) => values[name as keyof typeof SPEC_PARSE_OPTIONS] === undefined);
    throw new UsageProblem(`${command} needs ${missing.map((name) => `--${name}`).join(', ')}: ${SPEC_OPTIONS}`);
  }
  const spec = { startHz, endHz, durationS, sampleRateHz, levelDbfs };
  try {
    logSweepLayout(spec);
  } catch (error) {
    if (error instanceof RangeError) throw new UsageProblem(error.message);
    throw error;
  }
  return spec;
}

export function sweepCommand(args: string[]): string {
  const { values, positionals } = parseArgs({
    args: joinNegativeValues(args, ['level-dbfs']),
    allowPositionals: true,
    strict: true,
    options: { write: { type: 'string' }, ...SPEC_PARSE_OPTIONS },
  });
  if (positionals.length > 0) throw new UsageProblem(`sweep takes no file of its own: give --write OUT.wav`);
  const spec = sweepSpec('sweep', values);
  const out = values.write;
  if (out === undefined || out.trim() === '') throw new UsageProblem(`sweep needs --write OUT.wav, the file to write`);
  const samples = logSweep(spec);
  try {
    writeFileSync(out, encodeWavFloat32([samples], spec.sampleRateHz));
  } catch (error) {
    throw new UsageProblem(`${out}: cannot be written (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`);
  }
  return `${out}: ${samples.length} samples at ${spec.sampleRateHz} Hz (${(samples.length / spec.sampleRateHz).toFixed(3)} s), mono 32-bit float: ${LOG_SWEEP_SILENCE_BEFORE_S} s silence, a ${spec.durationS} s sweep from ${spec.startHz} to ${spec.endHz} Hz at ${spec.levelDbfs} dBFS, ${LOG_SWEEP_SILENCE_AFTER_S} s silence`;
}

export function responseCommand(args: string[]): string {
  const { values, positionals } = parseArgs({
    args: joinNegativeValues(args, ['level-dbfs']),
    allowPositionals: true,
    strict: true,
    options: { ...SPEC_PARSE_OPTIONS, 'reference-hz': { type: 'string' }, channel: { type: 'string' }, json: { type: 'boolean', default: false } },
  });
  if (positionals.length !== 1) throw new UsageProblem(`response takes one WAV file, the capture of the sweep`);
  const file = positionals[0];
  const spec = sweepSpec('response', values);
  const referenceHz = numberOption('reference-hz', values['reference-hz'], (v) => v > 0, 'a frequency in Hz above 0') ?? RESPONSE_REFERENCE_HZ;
  if (referenceHz < spec.startHz || referenceHz > spec.endHz) {
    throw new UsageProblem(`--reference-hz must lie between --from and --to (${spec.startHz}–${spec.endHz} Hz), got ${referenceHz}`);
  }
  const channel = numberOption('channel', values.channel, (v) => Number.isInteger(v) && v >= 0, 'a whole number ≥ 0') ?? 0;

  const wav = openWavForCommand(file);
  let result: SweepResponse;
  try {
    const { layout } = wav;
    if (channel >= layout.channelCount) throw new UsageProblem(`${file}: has ${layout.channelCount} channel(s); --channel ${channel} does not exist`);
    // Nothing is resampled: a capture at another rate would read every frequency wrong.
    if (layout.sampleRateHz !== spec.sampleRateHz) {
      throw new UsageProblem(`${file}: recorded at ${layout.sampleRateHz} Hz, but the sweep was made at --rate ${spec.sampleRateHz} Hz; capture at the sweep's own rate`);
    }
    // Refused before the samples are read into memory.
    if (layout.frameCount > SWEEP_CAPTURE_MAX_SAMPLES) {
      throw new UsageProblem(`${file}: holds ${layout.frameCount} samples, more than the ${SWEEP_CAPTURE_MAX_SAMPLES} analysed; cut it to the stimulus and a second either side`);
    }
    const samples = new Float64Array(layout.frameCount);
    wav.channel(channel).read(0, samples);
    const outcome = analyzeSweepResponse(samples, spec, { referenceHz });
    if (!outcome.ok) throw new UsageProblem(`${file}: ${outcome.reason}`);
    result = outcome.result;
  } catch (error) {
    throw fileProblem(file, error);
  } finally {
    wav.close();
  }
  const json = {
    latencySamples: result.latencySamples,
    referenceHz: result.referenceHz,
    response: result.response.map(({ frequencyHz, levelDb, phaseDeg }) => ({ frequencyHz, levelDb, phaseDeg })),
    harmonics: result.harmonics.map(({ order, points }) => ({ order, points: points.map(({ frequencyHz, levelDbc }) => ({ frequencyHz, levelDbc })) })),
  };
  refuseNonFinite(file, json, 'check the capture holds the sweep these parameters describe');
  return values.json ? JSON.stringify(json) : responseTable(file, channel, spec, result);
}

/** Every fourth point (about a third of an octave): enough to read; --json gives them all. */
function responseTable(file: string, channel: number, spec: LogSweepSpec, r: SweepResponse): string {
  const orders = r.harmonics.map((h) => h.order);
  const lines = [
    `${file} — channel ${channel}: sweep ${spec.startHz}–${spec.endHz} Hz, ${spec.durationS} s at ${spec.levelDbfs} dBFS, ${spec.sampleRateHz} Hz`,
    `latency       ${r.latencySamples} samples (${((r.latencySamples / spec.sampleRateHz) * 1000).toFixed(2)} ms), removed from the phase`,
    `levels relative to ${r.referenceHz} Hz; harmonics in dBc, by the fundamental's frequency`,
    '',
    `frequency Hz    level dB   phase °${orders.map((o) => `H${o} dBc`.padStart(10)).join('')}`,
  ];
  const shown = r.response.filter((_, i) => i % 4 === 0 || i === r.response.length - 1);
  for (const p of shown) {
    const cells = r.harmonics.map((h) => {
      const point = h.points.find((q) => q.frequencyHz === p.frequencyHz);
      return (point ? point.levelDbc.toFixed(1) : '—').padStart(10);
    });
    lines.push(`${p.frequencyHz.toFixed(1).padStart(12)}${p.levelDb.toFixed(2).padStart(12)}${p.phaseDeg.toFixed(1).padStart(10)}${cells.join('')}`);
  }
  lines.push(`(${shown.length} of ${r.response.length} points; --json gives them all)`);
  for (const u of r.unresolved) lines.push(`H${u.order} not read: ${u.reason}`);
  return lines.join('\n');
}
