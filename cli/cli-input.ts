// What every command does with what a person typed: options read as plain decimals, files opened
// with their problem in words, and results refused rather than printed with a NaN in them. A
// problem with the input is a UsageProblem: one line on stderr, exit status 1.

import { WavFormatError } from '../shared/audio/wav.ts';
import { parsePlainDecimal } from '../shared/trim/trim-csv.ts';
import { openWavFile, type WavFile, WavReadError } from './wav-file.ts';

/** A problem with the user's input: printed as one line, exit status 1. */
export class UsageProblem extends Error {}

export function numberOption(name: string, text: string | undefined, check: (value: number) => boolean, expected: string): number | undefined {
  if (text === undefined) return undefined;
  // Plain decimals only, as in the CSV: no hex, exponents, Infinity or blanks.
  const value = parsePlainDecimal(text.trim());
  if (value === null || !check(value)) throw new UsageProblem(`--${name} must be ${expected} (a plain decimal), got “${text}”`);
  return value;
}

/**
 * `--name -6` as `--name=-6` for the options named, whose values are usually negative: the argument
 * parser otherwise takes "-6" for an option and refuses the line.
 */
export function joinNegativeValues(args: readonly string[], names: readonly string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < args.length; i++) {
    const next = args[i + 1];
    if (names.some((name) => args[i] === `--${name}`) && next !== undefined && /^-[0-9.]/.test(next)) {
      out.push(`${args[i]}=${next}`);
      i++;
    } else out.push(args[i]);
  }
  return out;
}

/** The path of the first number in `value` that is NaN or infinite, or null when all are finite. */
function firstNonFinite(value: unknown, path: string): { path: string; value: number } | null {
  if (typeof value === 'number') return Number.isFinite(value) ? null : { path, value };
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const found = firstNonFinite(value[i], `${path}[${i}]`);
      if (found) return found;
    }
  } else if (value !== null && typeof value === 'object') {
    for (const [key, item] of Object.entries(value)) {
      const found = firstNonFinite(item, path ? `${path}.${key}` : key);
      if (found) return found;
    }
  }
  return null;
}

/** Refuses to print a result holding NaN or infinity: says which value could not be computed. */
export function refuseNonFinite(file: string, result: unknown, advice: string): void {
  const bad = firstNonFinite(result, '');
  if (bad) throw new UsageProblem(`${file}: ${bad.path} could not be computed (it came out as ${bad.value}), so nothing is printed; ${advice}`);
}

/** Opens a WAV file for reading in pieces; its problem in words when it cannot be. */
export function openWavForCommand(file: string): WavFile {
  try {
    return openWavFile(file);
  } catch (error) {
    if (error instanceof WavFormatError) throw new UsageProblem(`${file}: ${error.message}`);
    const code = (error as NodeJS.ErrnoException).code;
    if (code) throw new UsageProblem(`${file}: cannot be read (${code})`);
    throw error;
  }
}

/** An error met while reading or analysing a file: the user's problem in words when it is one, else the error as it was. */
export function fileProblem(file: string, error: unknown): unknown {
  if (error instanceof RangeError || error instanceof WavReadError) return new UsageProblem(`${file}: ${error.message}`);
  const code = (error as NodeJS.ErrnoException).code;
  if (code && !code.startsWith('ERR_')) return new UsageProblem(`${file}: cannot be read (${code})`);
  return error;
}
