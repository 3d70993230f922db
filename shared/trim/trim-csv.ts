// Trim points from CSV: a header row naming the columns, one row per trim point, the first row
// the safe end. Required: position, level_dbc. Optional: phase_deg, gain_db, lf_dbfs.

import type { TrimPointData } from './trim-assistant.ts';

export class TrimCsvError extends Error {
  override name = 'TrimCsvError';
}

const REQUIRED = ['position', 'level_dbc'] as const;
const OPTIONAL = ['phase_deg', 'gain_db', 'lf_dbfs'] as const;

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
    const number = (name: string, required: boolean): number | null => {
      const index = column(name);
      if (index < 0) return null;
      const cell = cells[index];
      if (cell === '') {
        if (required) throw new TrimCsvError(`line ${lineNumber}: ${name} is empty`);
        return null;
      }
      const value = Number(cell);
      if (!Number.isFinite(value)) throw new TrimCsvError(`line ${lineNumber}: ${name} “${cell}” is not a number`);
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
