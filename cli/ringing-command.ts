// `trimbench ringing FILE.csv [--channel N] [--json]`: the ringing after the edges of a square-wave
// response captured by an oscilloscope and exported as CSV (shared/scope/). An audio interface
// cannot see ringing at 100 kHz and above, which is why the record comes from a scope.

import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { withPrefix } from '../shared/format.ts';
import { UsageProblem } from './cli-input.ts';
import { analyzeRinging, RINGING_FLAG_TEXT, RingingError, type RingingAnalysis } from '../shared/scope/ringing.ts';
import { readScopeCsv, ScopeCsvError, type ScopeRecord } from '../shared/scope/scope-csv.ts';

export const RINGING_USAGE = {
  line: 'trimbench ringing FILE.csv [--channel N] [--json]',
  help: `  ringing   the ringing after the edges of a square-wave response in an oscilloscope's CSV export:
            frequency, damping ratio, overshoot, settling time (medians over the edges); --channel N
            counts the voltage columns from 0`,
};

const AUDIO_INTERFACE_NOTE =
  'An audio interface cannot see ringing at 100 kHz and above (even sampling at 192 kHz its band ends below 96 kHz), which is why this record comes from an oscilloscope.';


function channelOption(text: string | undefined): number {
  if (text === undefined) return 0;
  if (!/^\d{1,6}$/.test(text.trim())) throw new UsageProblem(`--channel must be a whole number ≥ 0 (the voltage columns counted from 0), got “${text}”`);
  return Number(text.trim());
}

function readRecord(file: string): ScopeRecord {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === 'ERR_STRING_TOO_LONG') throw new UsageProblem(`${file}: too large to read as text; export fewer points (a few periods of the square wave are enough)`);
    throw new UsageProblem(`${file}: cannot be read (${code ?? (error as Error).message})`);
  }
  try {
    return readScopeCsv(text);
  } catch (error) {
    if (error instanceof ScopeCsvError) throw new UsageProblem(`${file}: ${error.message}`);
    throw error;
  }
}

export function ringingCommand(args: string[]): string {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    strict: true,
    options: { channel: { type: 'string' }, json: { type: 'boolean', default: false } },
  });
  if (positionals.length !== 1) throw new UsageProblem(`ringing takes one CSV file\nusage: ${RINGING_USAGE.line}`);
  const file = positionals[0];
  const channelIndex = channelOption(values.channel);
  const record = readRecord(file);
  const channel = record.channels[channelIndex];
  if (!channel) {
    const names = record.channels.map((c) => `“${c.name}”`).join(', ');
    throw new UsageProblem(`${file}: has ${record.channels.length} voltage column${record.channels.length === 1 ? '' : 's'} (${names}); --channel ${channelIndex} does not exist`);
  }
  let result: RingingAnalysis;
  try {
    result = analyzeRinging(channel.values, record.sampleIntervalS);
  } catch (error) {
    if (error instanceof RingingError) throw new UsageProblem(`${file}: channel ${channelIndex} (“${channel.name}”): ${error.message}`);
    throw error;
  }
  const summary = {
    edges: result.edges.length,
    ringFrequencyHz: result.ringFrequencyHz,
    dampingRatio: result.dampingRatio,
    overshootPercent: result.overshootPercent,
    settlingTimeS: result.settlingTimeS,
    flags: result.flags,
  };
  // JSON would print NaN or infinity as null, which reads as "no ringing": refuse instead.
  for (const [key, value] of Object.entries(summary)) {
    if (typeof value === 'number' && !Number.isFinite(value)) {
      throw new UsageProblem(`${file}: ${key} could not be computed (it came out as ${value}); check the record holds a square-wave response`);
    }
  }
  return values.json ? JSON.stringify(summary) : ringingText(file, channelIndex, record, result);
}

function ringingText(file: string, channelIndex: number, record: ScopeRecord, r: RingingAnalysis): string {
  const channel = record.channels[channelIndex];
  const unit = channel.unit;
  const rising = r.edges.filter((e) => e.polarity === 'rising').length;
  const timeBase =
    record.timeBase.kind === 'column'
      ? `time from column ${record.timeBase.column} (“${record.timeBase.name}”)`
      : `time from line ${record.timeBase.line} (“${record.timeBase.key}”)`;
  const lines = [
    `${file} — channel ${channelIndex} (“${channel.name}”), ${channel.values.length} samples every ${withPrefix(record.sampleIntervalS, 's')} (${withPrefix(1 / record.sampleIntervalS, 'S/s')}), ${timeBase}`,
    `edges        ${r.edges.length} (${rising} rising, ${r.edges.length - rising} falling)`,
    `step         ${withPrefix(r.stepV, unit)} (${withPrefix(r.lowLevelV, unit)} to ${withPrefix(r.highLevelV, unit)}), noise ${withPrefix(r.noiseV, unit, 2)} RMS`,
    `overshoot    ${r.overshootPercent.toFixed(1)} % of the step`,
    r.ringFrequencyHz === null
      ? 'ringing      none above the noise'
      : `ringing      ${withPrefix(r.ringFrequencyHz, 'Hz')}, damping ratio ${r.dampingRatio!.toFixed(3)} (logarithmic decrement ${r.logDecrement!.toFixed(3)})`,
    `settling     ${r.settlingTimeS === null ? '— (not judged)' : withPrefix(r.settlingTimeS, 's', 3)} to within ±${r.settlingBandPercent} % of the step, from each edge's 50 % point`,
    '',
    'edge  polarity  at           step        overshoot  ringing       ζ       settling',
    ...r.edges.map((e, k) =>
      [
        String(k + 1).padStart(4),
        `  ${e.polarity.padEnd(8)}`,
        `  ${withPrefix(record.startTimeS + e.timeS, 's').padEnd(11)}`,
        `  ${withPrefix(e.stepV, unit).padEnd(10)}`,
        `  ${`${e.overshootPercent.toFixed(1)} %`.padStart(9)}`,
        `  ${withPrefix(e.ringFrequencyHz, 'Hz').padEnd(12)}`,
        `  ${(e.dampingRatio?.toFixed(3) ?? '—').padEnd(6)}`,
        `  ${withPrefix(e.settlingTimeS, 's', 3)}`,
      ].join(''),
    ),
    '',
    ...(r.flags.length ? r.flags.map((flag) => `${flag}: ${RINGING_FLAG_TEXT[flag]}`) : ['flags: none']),
    ...record.notes.map((note) => `note: ${note}`),
    AUDIO_INTERFACE_NOTE,
  ];
  return lines.join('\n');
}
