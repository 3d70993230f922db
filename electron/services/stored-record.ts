// What makes a stored row trustworthy when it is read back: every row carries a CRC-32 of its own
// values (so a flipped byte that leaves the file's structure intact is still noticed), and every
// JSON value is wrapped with the version of its shape and validated against it.
//
// SQLite's own checks (quick_check at start) find damaged pages and b-trees; they cannot know that
// a digit inside a record changed. A record that fails either check is reported as unreadable —
// never shown, judged or printed as if it were whole.

import { crc32 } from 'node:zlib';
import type { z } from 'zod';
import { ExpectedFailure } from './expected-failure.ts';

/** The version of the shapes written today; a value from a newer Trimbench is not guessed at. */
export const STORED_JSON_VERSION = 1;

/** A stored record that cannot be read as written: damaged, or from a newer Trimbench. */
export class UnreadableRecord extends ExpectedFailure {
  override name = 'UnreadableRecord';
  /** What the record is, in words: "trim point 3 of run 12". */
  readonly what: string;
  /** Why, for the log: never shown to the technician. */
  readonly detail: string;
  /** True when SQLite found the file itself damaged, not just this record. */
  readonly inFile: boolean;
  constructor(what: string, detail: string, { newer = false, inFile = false }: { newer?: boolean; inFile?: boolean } = {}) {
    super(`its stored ${what} ${newer ? 'was written by a newer Trimbench' : 'is damaged'}.`);
    this.what = what;
    this.detail = detail;
    this.inFile = inFile;
  }
}

/** The check value stored with a row: CRC-32 (ISO 3309, as zlib computes it) of the table and values. */
export function sealRow(table: string, values: readonly unknown[]): number {
  return crc32(JSON.stringify([table, ...values]));
}

/**
 * Refuses a row whose values no longer match the check value written with them. A row from before
 * rows were sealed (crc NULL) is accepted: there is nothing to compare it with.
 */
export function checkRow(table: string, crc: number | null, values: readonly unknown[], what: string): void {
  if (crc === null) return;
  const expected = sealRow(table, values);
  if (crc !== expected) throw new UnreadableRecord(what, `${table} row check value ${crc} does not match its values (${expected})`);
}

/** A value as stored: wrapped with the version of its shape. */
export function toStoredJson(value: unknown): string {
  return JSON.stringify({ v: STORED_JSON_VERSION, value });
}

function unwrap(parsed: unknown): { version: number; value: unknown } {
  if (parsed !== null && typeof parsed === 'object' && !Array.isArray(parsed)) {
    const keys = Object.keys(parsed);
    const record = parsed as { v?: unknown; value?: unknown };
    if (keys.length === 2 && Number.isInteger(record.v) && 'value' in record) return { version: record.v as number, value: record.value };
  }
  // Written before values carried a version: today's shape, read through the schema's defaults.
  return { version: 0, value: parsed };
}

/** Reads a stored value through its schema; anything else is an UnreadableRecord naming `what`. */
export function fromStoredJson<S extends z.ZodType>(text: string, schema: S, what: string): z.output<S> {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (error) {
    throw new UnreadableRecord(what, `not JSON: ${(error as Error).message}`);
  }
  const { version, value } = unwrap(parsed);
  if (version > STORED_JSON_VERSION) {
    throw new UnreadableRecord(what, `stored version ${version}, this Trimbench reads up to ${STORED_JSON_VERSION}`, { newer: true });
  }
  const result = schema.safeParse(value);
  if (!result.success) {
    const issue = result.error.issues[0];
    throw new UnreadableRecord(what, `does not validate at ${issue?.path.join('.') || '(root)'}: ${issue?.message ?? 'unknown'}`);
  }
  return result.data;
}
