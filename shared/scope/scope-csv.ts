// Oscilloscope records exported as CSV text. Exports differ: some put key/value lines before the
// header (the instrument, the record length, the sample interval), some have no header at all, some
// give no time column but state the sample interval; values are separated by commas, semicolons or
// tabs (with a decimal comma beside the last two), and times are written in seconds, usually in
// scientific notation. This reader takes all of those and refuses anything else with the line and
// what was expected there: a misread time base would put the ringing at the wrong frequency and
// nothing downstream could tell.
//
// CSV itself after RFC 4180: fields may be quoted with double quotes ("" inside for a quote), lines
// end in CR LF, LF or a lone CR.

export class ScopeCsvError extends Error {
  override name = 'ScopeCsvError';
  /** 1-based line of the problem, or null when it concerns the whole file. */
  readonly line: number | null;
  constructor(message: string, line: number | null) {
    super(line === null ? message : `line ${line}: ${message}`);
    this.line = line;
  }
}

export type ScopeSeparator = ',' | ';' | '\t';

export interface ScopeChannel {
  /** The column's name from the header, or “column N” when the file has none. */
  name: string;
  /** 1-based column in the file. */
  column: number;
  /** Volts, scaled from mV or µV when the header says so; another unit the header names is kept as it is (`unit`). */
  values: Float64Array;
  unit: string;
}

export interface PreambleLine {
  line: number;
  key: string;
  value: string;
}

export type ScopeTimeBase =
  | { kind: 'column'; column: number; name: string }
  | { kind: 'preamble'; line: number; key: string };

export interface ScopeRecord {
  sampleIntervalS: number;
  /** Time of the first sample; 0 when the file gives none. */
  startTimeS: number;
  timeBase: ScopeTimeBase;
  channels: ScopeChannel[];
  preamble: PreambleLine[];
  headerLine: number | null;
  firstDataLine: number;
  separator: ScopeSeparator;
  decimalComma: boolean;
  /** What was read in a way the technician should know about, one sentence each. */
  notes: string[];
}

// A number as instruments write it: optional sign, digits with an optional point, optional exponent.
// Not JavaScript's Number(), which also takes hex, "Infinity" and blanks.
const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
const DECIMAL_COMMA_NUMBER = /^[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?$/;

const PREFIX: Readonly<Record<string, number>> = { '': 1, p: 1e-12, n: 1e-9, u: 1e-6, 'µ': 1e-6, 'μ': 1e-6, m: 1e-3, k: 1e3, K: 1e3, M: 1e6, G: 1e9 };
// Longest first, so “sec” is not read as “s” after a prefix “se”.
const TIME_UNITS = ['seconds', 'second', 'secs', 'sec', 's'] as const;
const RATE_UNITS = ['Sa/s', 'sa/s', 'S/s', 'SPS', 'sps', 'Hz'] as const;
const VOLT_UNITS = ['volts', 'volt', 'V'] as const;

/** The factor to the base unit of `unit` (a prefix and one of `names`), or null when it is not one. */
function unitFactor(unit: string, names: readonly string[]): number | null {
  for (const name of names) {
    if (!unit.endsWith(name)) continue;
    const prefix = unit.slice(0, unit.length - name.length);
    if (Object.hasOwn(PREFIX, prefix)) return PREFIX[prefix];
  }
  return null;
}

const TIME_NAME = /\btime\b|^(?:t|secs?|seconds?|s)$/i;
// A running sample number carries no voltage: it is left out rather than shown as a channel.
const INDEX_NAME = /^(?:index|idx|no\.?|number|#|n|samples?|points?|pt)$/i;

// Preamble keys that state the time base, compared after the key's unit and colon are taken off.
const INTERVAL_KEY = /^(?:(?:sample|sampling|time|x)[ _-]?(?:interval|increment|step)|(?:sample|sampling)[ _-]?period|dt|delta[ _-]?t|Δt|interval|x[ _-]?inc(?:rement)?)$/i;
const RATE_KEY = /^(?:sample|sampling)[ _-]?(?:rate|frequency)$/i;
const LENGTH_KEY = /^(?:record[ _-]?length|number[ _-]of[ _-]points|points|point[ _-]count|sample[ _-]count|samples|data[ _-]points|memory[ _-]length)$/i;
const START_KEY = /^(?:start[ _-]?time|first[ _-]?time|x[ _-]?(?:origin|start|zero)|time[ _-]?(?:origin|start))$/i;

/** A cell as it may be echoed in a message: short, no control characters reaching the terminal. */
function shown(cell: string): string {
  return (cell.length > 24 ? `${cell.slice(0, 20)}…` : cell).replace(/[\u0000-\u001f\u007f-\u009f]/g, '?');
}

function readNumber(cell: string, decimalCommaAllowed: boolean): number | null {
  let text = cell;
  if (!NUMBER.test(text)) {
    if (!decimalCommaAllowed || !DECIMAL_COMMA_NUMBER.test(text)) return null;
    text = text.replace(',', '.');
  }
  const value = Number(text);
  return Number.isFinite(value) ? value : null;
}

/** The weight of the last digit written, so a time's rounding in print is not taken for jitter. */
function lastDigitWeight(cell: string): number {
  const match = /^[+-]?\d*(?:[.,](\d*))?(?:[eE]([+-]?\d+))?$/.exec(cell);
  if (!match) return 0;
  return 10 ** (Number(match[2] ?? 0) - (match[1]?.length ?? 0));
}

/** The cells of a line, trimmed, quotes taken off; empty cells left by a trailing separator dropped. */
function splitCells(line: string, separator: ScopeSeparator): string[] {
  let cells: string[];
  if (!line.includes('"')) {
    cells = line.split(separator).map((cell) => cell.trim());
  } else {
    cells = [];
    let cell = '';
    let quoted = false;
    for (let i = 0; i < line.length; i++) {
      const c = line[i];
      if (quoted) {
        if (c !== '"') cell += c;
        else if (line[i + 1] === '"') {
          cell += '"';
          i++;
        } else quoted = false;
      } else if (c === '"' && cell.trim() === '') {
        quoted = true;
        cell = '';
      } else if (c === separator) {
        cells.push(cell.trim());
        cell = '';
      } else cell += c;
    }
    cells.push(cell.trim());
  }
  while (cells.length > 1 && cells[cells.length - 1] === '') cells.pop();
  return cells;
}

function chooseSeparator(lines: readonly string[]): ScopeSeparator {
  const nonBlank: string[] = [];
  for (const line of lines) if (line.trim() !== '') nonBlank.push(line);
  // The first and last lines cover the preamble, the header and the data.
  const sample = nonBlank.length <= 256 ? nonBlank : [...nonBlank.slice(0, 128), ...nonBlank.slice(-128)];
  // Tab and semicolon first: where they separate, a comma is a decimal comma.
  for (const separator of ['\t', ';'] as const) {
    if (sample.filter((line) => line.includes(separator)).length * 2 >= sample.length) return separator;
  }
  return ',';
}

/** A header cell's name and unit: “Time (s)”, “CH1 [mV]”, “Time/us”, or a bare name. */
function nameAndUnit(cell: string): { name: string; unit: string | null } {
  const bracketed = /^(.*?)\s*[([]\s*([^)\]]*?)\s*[)\]]$/.exec(cell);
  if (bracketed && bracketed[1] !== '') return { name: bracketed[1], unit: bracketed[2] };
  const slashed = /^(.*?)\s*\/\s*([^/]+)$/.exec(cell);
  if (slashed && slashed[1] !== '' && (unitFactor(slashed[2], TIME_UNITS) !== null || unitFactor(slashed[2], VOLT_UNITS) !== null)) {
    return { name: slashed[1], unit: slashed[2] };
  }
  return { name: cell, unit: null };
}

/** A units row under the header: every cell a unit of time or voltage, bracketed or not, or empty. */
function isUnitsRow(cells: readonly string[]): boolean {
  return cells.every((cell) => {
    const unit = cell.replace(/^[([]\s*(.*?)\s*[)\]]$/, '$1');
    return unit === '' || unitFactor(unit, TIME_UNITS) !== null || unitFactor(unit, VOLT_UNITS) !== null;
  });
}

/** A preamble value with an optional unit: “1e-9”, “1.0E-09 s”, “2 ns”, “500 MS/s”. */
function quantity(text: string, decimalCommaAllowed: boolean): { value: number; unit: string } | null {
  const match = /^([+-]?[\d.,]+(?:[eE][+-]?\d+)?)\s*(\S*)$/.exec(text.trim());
  if (!match) return null;
  const value = readNumber(match[1], decimalCommaAllowed);
  return value === null ? null : { value, unit: match[2] };
}

interface TimeStatement {
  line: number;
  key: string;
  /** Seconds, or the problem with the value in words. */
  seconds: number | null;
  text: string;
}

function readPreamble(entries: readonly PreambleLine[], decimalCommaAllowed: boolean) {
  let interval: TimeStatement | null = null;
  let rate: TimeStatement | null = null;
  let length: { line: number; points: number } | null = null;
  let startTimeS: number | null = null;
  for (const entry of entries) {
    const key = entry.key.replace(/\s*[([][^)\]]*[)\]]\s*$/, '').trim();
    const keyUnit = /[([]\s*([^)\]]*?)\s*[)\]]\s*$/.exec(entry.key)?.[1] ?? '';
    const q = quantity(entry.value, decimalCommaAllowed);
    const unit = q?.unit || keyUnit;
    if (INTERVAL_KEY.test(key) && interval === null) {
      let seconds: number | null = null;
      if (q && q.value > 0) {
        const asTime = unit === '' ? 1 : unitFactor(unit, TIME_UNITS);
        const asRate = unit === '' ? null : unitFactor(unit, RATE_UNITS);
        seconds = asTime !== null ? q.value * asTime : asRate !== null ? 1 / (q.value * asRate) : null;
      }
      interval = { line: entry.line, key: entry.key, seconds, text: entry.value };
    } else if (RATE_KEY.test(key) && rate === null) {
      const factor = q && q.value > 0 ? (unit === '' ? 1 : unitFactor(unit, RATE_UNITS)) : null;
      rate = { line: entry.line, key: entry.key, seconds: q && factor !== null ? 1 / (q.value * factor) : null, text: entry.value };
    } else if (LENGTH_KEY.test(key) && length === null && q && Number.isInteger(q.value) && q.value > 0) {
      length = { line: entry.line, points: q.value };
    } else if (START_KEY.test(key) && startTimeS === null && q) {
      const factor = unit === '' ? 1 : unitFactor(unit, TIME_UNITS);
      if (factor !== null) startTimeS = q.value * factor;
    }
  }
  return { interval, rate, length, startTimeS };
}

/**
 * Reads a scope record. Throws ScopeCsvError naming the line and what was expected there when the
 * text is not a record this reader can take without guessing.
 */
export function readScopeCsv(text: string): ScopeRecord {
  // RFC 8259 §8.1 says it of JSON, and spreadsheet programs write one before CSV too.
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const lines = body.split(/\r\n|\n|\r/);
  const blank = (i: number) => lines[i].trim() === '';
  if (lines.every((_, i) => blank(i))) {
    throw new ScopeCsvError('the file is empty; expected a scope record: a header such as “Time,CH1” and rows of numbers such as “-2.5e-06,0.013”', null);
  }
  const separator = chooseSeparator(lines);
  const decimalCommaAllowed = separator !== ',';
  const cellsOf = (i: number) => splitCells(lines[i], separator);
  const isNumber = (cell: string) => readNumber(cell, decimalCommaAllowed) !== null;
  const notANumber = (i: number, cells: readonly string[], names: readonly string[] | null) => {
    const k = cells.findIndex((cell) => !isNumber(cell));
    const what = cells[k] === '' ? 'is empty' : `“${shown(cells[k])}” is not a number`;
    const column = names?.[k] ? ` (${names[k]})` : '';
    return new ScopeCsvError(`value ${k + 1}${column} ${what}; expected numbers such as -2.5e-06`, i + 1);
  };

  let first = -1;
  const textLines: number[] = [];
  for (let i = 0; i < lines.length && first < 0; i++) {
    if (blank(i)) continue;
    if (cellsOf(i).every(isNumber)) first = i;
    else textLines.push(i);
  }
  if (first < 0) {
    throw new ScopeCsvError(
      `no row of numbers found in ${textLines.length} line${textLines.length === 1 ? '' : 's'}; expected rows such as “-2.5e-06,0.013” (time in seconds, then volts), separated by commas, semicolons or tabs`,
      null,
    );
  }
  const width = cellsOf(first).length;

  // The header is the last line before the data, unless that is a key/value line of the preamble;
  // a units row may stand under it.
  let headerIndex = -1;
  let unitsIndex = -1;
  const last = textLines.at(-1);
  const beforeLast = textLines.at(-2);
  if (last !== undefined) {
    const cells = cellsOf(last);
    const hasNumber = cells.some(isNumber);
    // A preamble key is never a number: a line that starts with one is a row that could not be read.
    if (isNumber(cells[0]) && cells.length > 1) throw notANumber(last, cells, null);
    if (!hasNumber) {
      const above = beforeLast === undefined ? null : cellsOf(beforeLast);
      if (above && isUnitsRow(cells) && !above.some(isNumber) && above.length === cells.length) {
        headerIndex = beforeLast!;
        unitsIndex = last;
      } else if (cells.length === width || cells.some((cell) => TIME_NAME.test(nameAndUnit(cell).name))) {
        headerIndex = last;
      }
    } else if (beforeLast !== undefined) {
      const above = cellsOf(beforeLast);
      if (!above.some(isNumber) && above.length === width && cells.length === width && above.some((cell) => TIME_NAME.test(nameAndUnit(cell).name))) {
        throw notANumber(last, cells, above);
      }
    }
  }
  const header = headerIndex < 0 ? null : cellsOf(headerIndex).map(nameAndUnit);
  if (header && unitsIndex >= 0) {
    cellsOf(unitsIndex).forEach((cell, k) => {
      const unit = cell.replace(/^[([]\s*(.*?)\s*[)\]]$/, '$1');
      if (unit !== '' && header[k].unit === null) header[k].unit = unit;
    });
  }
  if (header && header.length !== width) {
    throw new ScopeCsvError(`${width} value${width === 1 ? '' : 's'}, expected ${header.length} as the header on line ${headerIndex + 1} names (${header.map((h) => h.name).join(', ')})`, first + 1);
  }

  const preamble: PreambleLine[] = [];
  for (const i of textLines) {
    if (headerIndex >= 0 && i >= headerIndex) break;
    const cells = cellsOf(i);
    const colon = cells.length === 1 ? /^([^:]+):\s*(.*)$/.exec(cells[0]) : null;
    const key = (colon ? colon[1] : cells[0]).replace(/:\s*$/, '').trim();
    const value = colon ? colon[2].trim() : cells.slice(1).filter((cell) => cell !== '').join(' ');
    preamble.push({ line: i + 1, key, value });
  }
  const stated = readPreamble(preamble, decimalCommaAllowed);
  const statedInterval = stated.interval ?? stated.rate;
  const notes: string[] = [];

  // Which column is time.
  const names = header?.map((h) => h.name) ?? null;
  const timeColumns = header ? header.flatMap((h, k) => (TIME_NAME.test(h.name) ? [k] : [])) : [];
  if (timeColumns.length > 1) {
    throw new ScopeCsvError(
      `columns ${timeColumns.map((k) => k + 1).join(' and ')} are both named as time; this reader takes one time column shared by all channels (export the channels together, or one per file)`,
      headerIndex + 1,
    );
  }
  let timeColumn = timeColumns[0] ?? -1;
  // Without a header, two or more columns are time and then the channels, as most exports write them.
  if (timeColumn < 0 && header === null && width >= 2) timeColumn = 0;
  if (timeColumn < 0 && statedInterval === null) {
    if (width === 1) {
      throw new ScopeCsvError(
        `one value per row and no sample interval before the data; expected a time column beside the volts, or a line such as “Sample Interval,1e-9” before the header`,
        first + 1,
      );
    }
    // A time column under another name: the first, as elsewhere.
    timeColumn = 0;
    notes.push(`No column is named as time and no sample interval is given, so column 1 (“${header![0].name}”) was read as time in seconds.`);
  }
  if (timeColumn < 0 && statedInterval !== null && statedInterval.seconds === null) {
    throw new ScopeCsvError(`the ${statedInterval.key.toLowerCase()} “${shown(statedInterval.text)}” cannot be read; expected seconds such as 1e-9 or 2 ns, or a rate such as 500 MS/s`, statedInterval.line);
  }
  let timeFactor = 1;
  if (timeColumn >= 0 && header?.[timeColumn].unit) {
    const factor = unitFactor(header[timeColumn].unit!, TIME_UNITS);
    if (factor === null) {
      throw new ScopeCsvError(`the time column's unit “${shown(header[timeColumn].unit!)}” is not a unit of time; expected s, ms, us, µs, ns or ps`, (unitsIndex >= 0 ? unitsIndex : headerIndex) + 1);
    }
    timeFactor = factor;
  }
  const channelColumns: number[] = [];
  for (let k = 0; k < width; k++) if (k !== timeColumn && !(header && INDEX_NAME.test(header[k].name))) channelColumns.push(k);
  if (channelColumns.length === 0) {
    throw new ScopeCsvError('no voltage column besides time; expected at least one channel column such as “CH1”', (headerIndex >= 0 ? headerIndex : first) + 1);
  }

  // The rows.
  const columns: number[][] = Array.from({ length: width }, () => []);
  const rowLines: number[] = [];
  const timeDigits: number[] = [];
  for (let i = first; i < lines.length; i++) {
    if (blank(i)) continue;
    const cells = cellsOf(i);
    if (cells.length !== width) {
      throw new ScopeCsvError(`${cells.length} value${cells.length === 1 ? '' : 's'}, expected ${width}${header ? ` (${names!.join(', ')})` : ` as on line ${first + 1}`}`, i + 1);
    }
    for (let k = 0; k < width; k++) {
      const value = readNumber(cells[k], decimalCommaAllowed);
      if (value === null) throw notANumber(i, cells, names);
      columns[k].push(value);
    }
    if (timeColumn >= 0) timeDigits.push(lastDigitWeight(cells[timeColumn]) * timeFactor);
    rowLines.push(i + 1);
  }
  const rows = rowLines.length;
  if (rows < 2) throw new ScopeCsvError(`only one row of numbers; a scope record has many samples`, first + 1);

  let sampleIntervalS: number;
  let startTimeS: number;
  let timeBase: ScopeTimeBase;
  if (timeColumn >= 0) {
    const time = columns[timeColumn];
    const steps = new Float64Array(rows - 1);
    for (let r = 1; r < rows; r++) steps[r - 1] = (time[r] - time[r - 1]) * timeFactor;
    const typical = steps.slice().sort()[steps.length >> 1];
    if (!(typical > 0)) {
      throw new ScopeCsvError(`time does not increase from row to row (column ${timeColumn + 1}); expected times in seconds rising by the sample interval`, rowLines[1]);
    }
    for (let r = 1; r < rows; r++) {
      // 1 % of a sample is far below any jitter that matters to ringing, far above float rounding;
      // the digits the file wrote are allowed for on top.
      const tolerance = 0.01 * typical + timeDigits[r] + timeDigits[r - 1];
      if (Math.abs(steps[r - 1] - typical) > tolerance) {
        throw new ScopeCsvError(
          `time steps by ${steps[r - 1].toPrecision(4)} s from line ${rowLines[r - 1]}, where the record steps by ${typical.toPrecision(4)} s; a scope record has evenly spaced samples (a row missing, out of order, or two records joined?)`,
          rowLines[r],
        );
      }
    }
    sampleIntervalS = ((time[rows - 1] - time[0]) * timeFactor) / (rows - 1);
    startTimeS = time[0] * timeFactor;
    timeBase = { kind: 'column', column: timeColumn + 1, name: header?.[timeColumn].name ?? `column ${timeColumn + 1}` };
    if (statedInterval?.seconds != null && Math.abs(statedInterval.seconds - sampleIntervalS) > 0.01 * sampleIntervalS) {
      notes.push(
        `Line ${statedInterval.line} gives ${statedInterval.key} ${statedInterval.text}, but the time column steps by ${sampleIntervalS.toPrecision(4)} s; the time column was used.`,
      );
    }
  } else {
    sampleIntervalS = statedInterval!.seconds!;
    startTimeS = stated.startTimeS ?? 0;
    timeBase = { kind: 'preamble', line: statedInterval!.line, key: statedInterval!.key };
  }
  if (stated.length && stated.length.points !== rows) {
    notes.push(`Line ${stated.length.line} states ${stated.length.points} points, but ${rows} rows were read${rows < stated.length.points ? ' (is the file cut short?)' : ''}.`);
  }

  const channels = channelColumns.map((k): ScopeChannel => {
    const unit = header?.[k].unit ?? null;
    const voltFactor = unit === null ? 1 : unitFactor(unit, VOLT_UNITS);
    const values = Float64Array.from(columns[k]);
    if (voltFactor !== null && voltFactor !== 1) for (let r = 0; r < values.length; r++) values[r] *= voltFactor;
    return { name: header?.[k].name || `column ${k + 1}`, column: k + 1, values, unit: voltFactor !== null ? 'V' : unit! };
  });
  return {
    sampleIntervalS,
    startTimeS,
    timeBase,
    channels,
    preamble,
    headerLine: headerIndex < 0 ? null : headerIndex + 1,
    firstDataLine: first + 1,
    separator,
    decimalComma: decimalCommaAllowed && lines.slice(first, first + 64).some((line) => line.includes(',')),
    notes,
  };
}
