// What makes a stored row trustworthy when it is read back: every row carries a CRC-32 of its own
// values (so a flipped byte that leaves the file's structure intact is still noticed), and every
// JSON value is wrapped with the version of its shape and validated against it.
//
// SQLite's own checks (quick_check at start) find damaged pages and b-trees; they cannot know that
// a digit inside a record changed. A record that fails either check is reported as unreadable —
// never shown, judged or printed as if it were whole.

import { crc32 } from 'node:zlib';
import type { z } from 'zod';
import type { Db } from './database.ts';
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

/**
 * The check value stored with a row: CRC-32 (ISO 3309, as zlib computes it) of the table and values.
 * Trailing NULLs are left out, so a column added at the end of a table's list by a later migration
 * (NULL in every older row) leaves the older rows' check values as they were.
 */
export function sealRow(table: string, values: readonly unknown[]): number {
  let end = values.length;
  while (end > 0 && (values[end - 1] === null || values[end - 1] === undefined)) end--;
  return crc32(JSON.stringify([table, ...values.slice(0, end)]));
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

/**
 * The sealed columns of each table, in the order their check value is computed: everything a row
 * holds except its id and the check value itself. Never reorder a shipped list; rows already
 * written were sealed in this order.
 */
export const SEALED_COLUMNS = {
  procedures: ['code', 'revision', 'definition_json'],
  units: ['serial', 'model_code', 'created_at'],
  runs: [
    'unit_id', 'procedure_id', 'operator', 'station', 'started_at', 'finished_at', 'verdict', 'verdict_reason',
    'verdict_reasons_json', 'final_thd_db', 'limit_thd_db', 'sheet_pdf_path', 'calibration_id',
    'chain_check_id', 'calibration_expires_at', 'retest_of', 'retest_reason', 'lot', 'station_id',
  ],
  trim_points: [
    'run_id', 'sequence', 'position', 'recorded_at', 'settled', 'in_fit', 'stimulus_hz', 'stimulus_level_dbfs', 'thd_db',
    'reading_json', 'live_json',
  ],
  trim_assessments: ['run_id', 'after_sequence', 'assessed_at', 'assessment_json'],
  point_confirmations: ['run_id', 'point_id', 'after_sequence', 'confirmed_at', 'assessment_json'],
  warning_changes: ['run_id', 'warning_id', 'change', 'at', 'position', 'after_sequence', 'seen', 'source'],
  warm_checks: ['run_id', 'recorded_at', 'position', 'cold_temperature_c', 'warm_temperature_c', 'reading_json', 'result_json'],
  calibrations: ['made_at', 'operator', 'station', 'setup_json', 'output_dbu_at_fs', 'input_dbu_at_fs', 'detail_json'],
  chain_checks: ['calibration_id', 'measured_at', 'operator', 'result_json', 'judgement_json', 'pass'],
  stations: ['name', 'first_seen_at'],
  step_results: ['run_id', 'step_id', 'kind', 'attempt', 'recorded_at', 'verdict', 'reasons_json', 'stimulus_json', 'readings_json'],
  measurements: ['step_result_id', 'run_id', 'quantity', 'value', 'unit', 'low', 'high', 'verdict', 'note'],
} as const;

export type SealedTable = keyof typeof SEALED_COLUMNS;
export type SealedRow<T extends SealedTable> = { [C in (typeof SEALED_COLUMNS)[T][number]]: string | number | null };

type HoldsColumns<T extends SealedTable> = { readonly [C in (typeof SEALED_COLUMNS)[T][number]]: unknown };

export const valuesOf = <T extends SealedTable>(table: T, row: HoldsColumns<T>) =>
  SEALED_COLUMNS[table].map((column) => (row as Record<string, unknown>)[column] ?? null);

/** Refuses a row whose values changed since they were written (see stored-record.ts). */
export function checkSealed<T extends SealedTable>(table: T, row: HoldsColumns<T> & { crc: number | null }, what: string): void {
  checkRow(table, row.crc, valuesOf(table, row), what);
}

/** Prepared inserts for every sealed table; the returned function inserts a row with its check value and returns its id. */
export function prepareSealedInserts(db: Db) {
  const inserts = Object.fromEntries(
    (Object.keys(SEALED_COLUMNS) as SealedTable[]).map((table) => {
      const columns = SEALED_COLUMNS[table];
      const sql = `INSERT INTO ${table} (${columns.join(', ')}, crc) VALUES (${columns.map((c) => `@${c}`).join(', ')}, @crc)`;
      return [table, db.prepare(sql)];
    }),
  ) as Record<SealedTable, ReturnType<Db['prepare']>>;
  return function insertSealed<T extends SealedTable>(table: T, row: SealedRow<T>): number {
    const values = valuesOf(table, row);
    const named = Object.fromEntries(SEALED_COLUMNS[table].map((column, i) => [column, values[i]]));
    return Number(inserts[table].run({ ...named, crc: sealRow(table, values) }).lastInsertRowid);
  };
}
