// The error log in the data folder: where the details of an unexpected error go, so the technician
// sees a short message with a reference and whoever fixes it finds the stack by that reference.
// One JSON object per line (JSON Lines, jsonlines.org), appended synchronously so a crash right
// after still leaves the entry on disk.

import { randomInt } from 'node:crypto';
import { appendFileSync, mkdirSync, renameSync, statSync } from 'node:fs';
import { join } from 'node:path';

export const ERROR_LOG_FILE = 'trimbench-errors.log';
/** The one older file kept after a rotation. */
export const ERROR_LOG_OLD_FILE = 'trimbench-errors.1.log';
/** Above this size the log is moved aside to ERROR_LOG_OLD_FILE, so the log never grows past two of these. */
export const ERROR_LOG_ROTATE_BYTES = 1024 * 1024;
/** Longest text kept of a message, a stack or a detail (as JSON), so one huge error cannot fill the disk. */
export const ERROR_LOG_FIELD_MAX_CHARS = 8 * 1024;
/** Longest line one entry can take: context and time are short, the three long fields are bounded above. */
export const ERROR_LOG_ENTRY_MAX_CHARS = 4 * ERROR_LOG_FIELD_MAX_CHARS;

export interface ErrorLog {
  /** Absolute path of the log file, to name in a message. */
  readonly path: string;
  /** Appends one entry; returns its reference (E- and 6 base-36 characters). Never throws. */
  record(context: string, error: unknown, detail?: unknown): string;
}

const CONTEXT_MAX_CHARS = 200;
// Limits of the walk that copies a detail before it is serialised: a 10^6-item list must not be
// stringified whole just to be cut to 8 KB afterwards.
const DETAIL_MAX_DEPTH = 6;
const DETAIL_MAX_ITEMS = 50;

/** Cuts a string so that its JSON form stays within max characters (escapes can make it 6× longer). */
function clip(text: string, max: number): string {
  let out = text.length > max ? `${text.slice(0, max - 1)}…` : text;
  while (out.length > 1 && JSON.stringify(out).length > max + 2) out = `${out.slice(0, Math.floor(out.length / 2))}…`;
  return out;
}

/** A bounded, acyclic copy of any value, safe to JSON.stringify. */
function boundedCopy(value: unknown, depth: number, seen: WeakSet<object>): unknown {
  if (value === null || typeof value === 'boolean') return value;
  if (typeof value === 'number') return Number.isFinite(value) ? value : String(value);
  if (typeof value === 'string') return clip(value, ERROR_LOG_FIELD_MAX_CHARS);
  if (typeof value === 'bigint' || typeof value === 'symbol' || typeof value === 'function') return String(value);
  if (value === undefined) return null;
  if (typeof value !== 'object') return String(value);
  if (seen.has(value)) return '[circular]';
  if (depth >= DETAIL_MAX_DEPTH) return '[deeper]';
  seen.add(value);
  if (value instanceof Error) return describeError(value);
  if (Array.isArray(value)) {
    const items = value.slice(0, DETAIL_MAX_ITEMS).map((item) => boundedCopy(item, depth + 1, seen));
    if (value.length > DETAIL_MAX_ITEMS) items.push(`… and ${value.length - DETAIL_MAX_ITEMS} more`);
    return items;
  }
  const out: Record<string, unknown> = {};
  let count = 0;
  for (const key in value) {
    if (!Object.prototype.hasOwnProperty.call(value, key)) continue;
    if (count++ === DETAIL_MAX_ITEMS) {
      out['…'] = 'more fields left out';
      break;
    }
    out[clip(key, 100)] = boundedCopy((value as Record<string, unknown>)[key], depth + 1, seen);
  }
  return out;
}

function describeError(error: unknown): Record<string, unknown> {
  if (!(error instanceof Error)) {
    let text: string;
    try {
      text = typeof error === 'string' ? error : JSON.stringify(boundedCopy(error, 0, new WeakSet())) ?? String(error);
    } catch {
      text = Object.prototype.toString.call(error);
    }
    return { name: 'NonError', message: clip(text, ERROR_LOG_FIELD_MAX_CHARS) };
  }
  const code = (error as { code?: unknown }).code;
  return {
    name: clip(String(error.name), 100),
    message: clip(String(error.message), ERROR_LOG_FIELD_MAX_CHARS),
    ...(code === undefined ? {} : { code: clip(String(code), 100) }),
    ...(error.stack ? { stack: clip(String(error.stack), ERROR_LOG_FIELD_MAX_CHARS) } : {}),
  };
}

/** Local time with its UTC offset (ISO 8601), so the entry lines up with the technician's clock. */
function localIsoTime(date: Date): string {
  const pad = (n: number, width = 2) => String(Math.abs(n)).padStart(width, '0');
  const offsetMin = -date.getTimezoneOffset();
  const sign = offsetMin >= 0 ? '+' : '-';
  return (
    `${date.getFullYear()}-${pad(date.getMonth() + 1)}-${pad(date.getDate())}T${pad(date.getHours())}:${pad(date.getMinutes())}:` +
    `${pad(date.getSeconds())}.${pad(date.getMilliseconds(), 3)}${sign}${pad(Math.trunc(offsetMin / 60))}:${pad(offsetMin % 60)}`
  );
}

export function openErrorLog(dataDir: string): ErrorLog {
  const path = join(dataDir, ERROR_LOG_FILE);
  const oldPath = join(dataDir, ERROR_LOG_OLD_FILE);
  return {
    path,
    record(context, error, detail) {
      const reference = `E-${randomInt(36 ** 6).toString(36).toUpperCase().padStart(6, '0')}`;
      try {
        let detailText: string | undefined;
        if (detail !== undefined) {
          detailText = JSON.stringify(boundedCopy(detail, 0, new WeakSet()));
          if (detailText !== undefined && detailText.length > ERROR_LOG_FIELD_MAX_CHARS) detailText = clip(detailText, ERROR_LOG_FIELD_MAX_CHARS);
        }
        const entry = {
          time: localIsoTime(new Date()),
          reference,
          context: clip(String(context), CONTEXT_MAX_CHARS),
          error: describeError(error),
          // A detail cut short is no longer valid JSON: it is then kept as text.
          ...(detailText === undefined ? {} : { detail: detailText.endsWith('…') ? detailText : JSON.parse(detailText) }),
        };
        const line = `${JSON.stringify(entry)}\n`;
        mkdirSync(dataDir, { recursive: true });
        let size = 0;
        try {
          size = statSync(path).size;
        } catch {
          // No log yet.
        }
        if (size > 0 && size + line.length > ERROR_LOG_ROTATE_BYTES) renameSync(path, oldPath);
        appendFileSync(path, line);
      } catch (logError) {
        // A log that cannot be written must not turn a handled error into a crash.
        try {
          console.error(`[trimbench] could not write the error log ${path}:`, logError, `\n[trimbench] ${reference} ${context}:`, error, detail ?? '');
        } catch {
          // Nothing left to report to.
        }
      }
      return reference;
    },
  };
}
