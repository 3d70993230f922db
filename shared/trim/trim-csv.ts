// Trim points from CSV: a header row naming the columns, one row per trim point, the first row
// the safe end. Required: position, level_dbc. Optional: phase_deg, gain_db, lf_dbfs.

import type { TrimPointData } from './trim-assistant.ts';

export class TrimCsvError extends Error {
  override name = 'TrimCsvError';
}

const REQUIRED = ['position', 'level_dbc'] as const;
const OPTIONAL = ['phase_deg', 'gain_db', 'lf_dbfs'] as const;

// A number as a person types it: digits with an optional sign and decimal point. JavaScript's
// Number() also takes hex (0x10), binary, exponents (1e308), "Infinity" and blanks, none of which
// a technician means in a trim sheet, and exponents let a typo overflow the fit to NaN.
const PLAIN_DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/;

/** The value of a plain decimal (“-42.5”, “3”, “.5”), or null for anything else. */
export function parsePlainDecimal(text: string): number | null {
  if (!PLAIN_DECIMAL.test(text)) return null;
  const value = Number(text);
  // Hundreds of digits still overflow to Infinity.
  return Number.isFinite(value) ? value : null;
}

// Far wider than any bench could produce, narrow enough that the fit's squares and exponentials
// stay finite: a trimmer position in turns or steps, levels in dB, a phase in degrees.
const RANGE: Record<(typeof REQUIRED)[number] | (typeof OPTIONAL)[number], [number, number]> = {
  position: [-1e6, 1e6],
  level_dbc: [-400, 100],
  phase_deg: [-3600, 3600],
  gain_db: [-400, 100],
  lf_dbfs: [-400, 100],
};

function splitLine(line: string): string[] {
  return line.split(',').map((cell) => cell.trim().replace(/^"(.*)"$/, '$1'));
}

export function parseTrimCsv(text: string): TrimPointData[] {
  const lines = text.replace(/^\uFEFF/, '').split(/\r?\n/);
  const headerIndex = lines.findIndex((line) => line.trim() !== '');
  if (headerIndex < 0) throw new TrimCsvError('the file is empty: expected a header row such as “position,level_dbc,phase_deg”');
  const header = splitLine(lines[headerIndex]).map((name) => name.toLowerCase());
  for (const name of REQUIRED) {
    if (!header.includes(name)) throw new TrimCsvError(`line ${headerIndex + 1}: the header has no “${name}” column (it has ${header.join(', ')})`);
  }
  const unknown = header.filter((name) => !(REQUIRED as readonly string[]).includes(name) && !(OPTIONAL as readonly string[]).includes(name));
  if (unknown.length) throw new TrimCsvError(`line ${headerIndex + 1}: unknown column “${unknown[0]}” (known: ${[...REQUIRED, ...OPTIONAL].join(', ')})`);
  const column = (name: string) => header.indexOf(name);

  const points: TrimPointData[] = [];
  for (let i = headerIndex + 1; i < lines.length; i++) {
    if (lines[i].trim() === '' || lines[i].trim().startsWith('#')) continue;
    const lineNumber = i + 1;
    const cells = splitLine(lines[i]);
    if (cells.length !== header.length) throw new TrimCsvError(`line ${lineNumber}: expected ${header.length} fields, found ${cells.length}`);
    const number = (name: keyof typeof RANGE, required: boolean): number | null => {
      const index = column(name);
      if (index < 0) return null;
      const cell = cells[index];
      const where = `line ${lineNumber}, column ${index + 1} (${name})`;
      // Echo the cell safely: short, and no control characters reaching the terminal.
      const shown = (cell.length > 24 ? `${cell.slice(0, 20)}…` : cell).replace(/[\u0000-\u001f\u007f-\u009f]/g, '?');
      if (cell === '') {
        if (required) throw new TrimCsvError(`${where} is empty; fill it in`);
        return null;
      }
      const value = parsePlainDecimal(cell);
      if (value === null) throw new TrimCsvError(`${where}: “${shown}” is not a number; write a plain decimal such as -42.5`);
      const [low, high] = RANGE[name];
      if (value < low || value > high) throw new TrimCsvError(`${where}: ${shown} lies outside ${low} to ${high}; check it for a typing error`);
      return value;
    };
    points.push({
      position: number('position', true)!,
      levelDbc: number('level_dbc', true)!,
      phaseDeg: number('phase_deg', false),
      gainDb: number('gain_db', false),
      lfDbfs: number('lf_dbfs', false),
    });
  }
  return points;
}
