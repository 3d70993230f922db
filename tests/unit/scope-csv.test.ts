// The scope-record reader against files whose content is known by construction: every layout here
// is invented for the test (a preamble of key/value lines, a header or none, time in seconds in
// scientific notation, commas, semicolons with a decimal comma, tabs). CSV's quoting and line ends
// follow RFC 4180 (§2: fields in double quotes may hold the separator, "" is a quote, lines end in
// CR LF).

import { describe, expect, it } from 'vitest';
import { readScopeCsv, ScopeCsvError } from '../../shared/scope/scope-csv.ts';
import { scopeCsvText } from '../support/scope-csv-text.ts';

// A short invented record: 2 channels, a ramp and its negative, every 2 ns from −1 µs.
const START_S = -1e-6;
const INTERVAL_S = 2e-9;
const ch1 = Float64Array.from({ length: 40 }, (_, i) => 0.01 * i - 0.2);
const ch2 = ch1.map((v) => -v);

function refusal(text: string): ScopeCsvError {
  try {
    readScopeCsv(text);
  } catch (error) {
    if (error instanceof ScopeCsvError) return error;
    throw error;
  }
  throw new Error('the reader took a file it should have refused');
}

describe('readScopeCsv reads the layouts scopes write', () => {
  it('a preamble, a header and two channels, comma separated, CR LF line ends and a byte order mark', () => {
    const text = `\uFEFF${scopeCsvText(START_S, INTERVAL_S, [ch1, ch2], {
      preamble: [
        ['Instrument', 'Bench scope (invented)'],
        ['Record Length', '40'],
        ['Sample Interval', '2e-9'],
      ],
      lineEnd: '\r\n',
    })}`;
    const record = readScopeCsv(text);
    // By construction: the interval, the first time, the names and every value as written (6 digits).
    expect(record.sampleIntervalS).toBeCloseTo(INTERVAL_S, 20);
    expect(Math.abs(record.sampleIntervalS / INTERVAL_S - 1)).toBeLessThan(1e-9);
    expect(record.startTimeS).toBe(START_S);
    expect(record.timeBase).toEqual({ kind: 'column', column: 1, name: 'Time' });
    expect(record.channels.map((c) => c.name)).toEqual(['CH1', 'CH2']);
    expect(record.channels.map((c) => c.column)).toEqual([2, 3]);
    for (let i = 0; i < ch1.length; i++) {
      expect(Math.abs(record.channels[0].values[i] - ch1[i])).toBeLessThan(1e-6);
      expect(Math.abs(record.channels[1].values[i] - ch2[i])).toBeLessThan(1e-6);
    }
    expect(record.preamble).toEqual([
      { line: 1, key: 'Instrument', value: 'Bench scope (invented)' },
      { line: 2, key: 'Record Length', value: '40' },
      { line: 3, key: 'Sample Interval', value: '2e-9' },
    ]);
    expect(record.headerLine).toBe(4);
    expect(record.firstDataLine).toBe(5);
    expect(record.notes).toEqual([]);
  });

  it('semicolons with a decimal comma, and tabs, read the same numbers', () => {
    const semicolons = readScopeCsv(scopeCsvText(START_S, INTERVAL_S, [ch1, ch2], { separator: ';', decimalComma: true, preamble: [['Sample Interval', '2,0E-09']] }));
    const tabs = readScopeCsv(scopeCsvText(START_S, INTERVAL_S, [ch1, ch2], { separator: '\t' }));
    for (const record of [semicolons, tabs]) {
      expect(Math.abs(record.sampleIntervalS / INTERVAL_S - 1)).toBeLessThan(1e-9);
      expect(record.channels).toHaveLength(2);
      for (let i = 0; i < ch1.length; i++) expect(Math.abs(record.channels[1].values[i] - ch2[i])).toBeLessThan(1e-6);
    }
    expect(semicolons.separator).toBe(';');
    expect(semicolons.decimalComma).toBe(true);
    expect(tabs.separator).toBe('\t');
  });

  it('without a header, two or more numeric columns are time then channels', () => {
    const record = readScopeCsv(scopeCsvText(START_S, INTERVAL_S, [ch1, ch2], { header: null }));
    expect(record.headerLine).toBeNull();
    expect(record.timeBase).toEqual({ kind: 'column', column: 1, name: 'column 1' });
    expect(record.channels.map((c) => c.name)).toEqual(['column 2', 'column 3']);
    expect(Math.abs(record.sampleIntervalS / INTERVAL_S - 1)).toBeLessThan(1e-9);
    expect(Math.abs(record.channels[0].values[5] - ch1[5])).toBeLessThan(1e-6);
  });

  it.each([
    ['a sample interval', ['Sample Interval', '2e-9'], 2e-9],
    ['an interval with its unit', ['Sample Interval', '2 ns'], 2e-9],
    ['a sample rate', ['Sample Rate', '500 MS/s'], 2e-9],
    ['a key with its unit in brackets', ['Time Increment (s)', '4.0E-09'], 4e-9],
  ] as const)('without a time column, %s in the preamble gives the time base', (_what, line, intervalS) => {
    const record = readScopeCsv(scopeCsvText(0, 0, [ch1], { withoutTime: true, preamble: [['Instrument', 'Bench scope (invented)'], [line[0], line[1]]] }));
    expect(record.timeBase).toEqual({ kind: 'preamble', line: 2, key: line[0] });
    expect(Math.abs(record.sampleIntervalS / intervalS - 1)).toBeLessThan(1e-12);
    expect(record.startTimeS).toBe(0);
    expect(record.channels).toHaveLength(1);
    expect(record.channels[0].values).toHaveLength(ch1.length);
  });

  it('units in the header scale time and volts: µs and mV (SI prefixes)', () => {
    const record = readScopeCsv(
      scopeCsvText(
        -1,
        0.002,
        [ch1.map((v) => v * 1000)],
        { header: ['Time (us)', 'CH1 [mV]'] },
      ),
    );
    expect(Math.abs(record.sampleIntervalS / 2e-9 - 1)).toBeLessThan(1e-9);
    expect(record.startTimeS).toBeCloseTo(-1e-6, 15);
    expect(Math.abs(record.channels[0].values[7] - ch1[7])).toBeLessThan(1e-6);
    expect(record.channels[0].unit).toBe('V');
  });

  it('a units row under the header is read as the units', () => {
    const text = scopeCsvText(-1, 0.002, [ch1], { header: ['Time', 'CH1'] }).replace('Time,CH1\n', 'Time,CH1\n(us),(V)\n');
    const record = readScopeCsv(text);
    expect(record.headerLine).toBe(1);
    expect(Math.abs(record.sampleIntervalS / 2e-9 - 1)).toBeLessThan(1e-9);
  });

  it('quoted fields may hold the separator (RFC 4180 §2.6) and blank lines are passed over', () => {
    const body = scopeCsvText(START_S, INTERVAL_S, [ch1]).split('\n');
    body.splice(10, 0, '', '   ');
    const text = ['"Probe","10:1, DC coupled"', '"Instrument","Bench ""B"" scope (invented)"', ...body].join('\n');
    const record = readScopeCsv(text);
    expect(record.preamble[0]).toEqual({ line: 1, key: 'Probe', value: '10:1, DC coupled' });
    expect(record.preamble[1].value).toBe('Bench "B" scope (invented)');
    expect(record.channels[0].values).toHaveLength(ch1.length);
  });

  it('times rounded in print are not taken for jitter: 7 digits at 1 ms, every 1.6 ns', () => {
    // At 1.000000e-3 s the seventh digit weighs 1 ns: the steps read 1 or 2 ns, never 1.6.
    const record = readScopeCsv(scopeCsvText(1e-3, 1.6e-9, [ch1], { timeDigits: 7 }));
    // From the first and last times, each within half a nanosecond: 1 ns over 39 steps at most.
    expect(Math.abs(record.sampleIntervalS - 1.6e-9)).toBeLessThan(1e-9 / 39);
  });

  it('says when the preamble disagrees with the rows: another interval, another record length', () => {
    const record = readScopeCsv(scopeCsvText(START_S, INTERVAL_S, [ch1], { preamble: [['Record Length', '10000'], ['Sample Interval', '1e-9']] }));
    expect(record.sampleIntervalS).toBeCloseTo(INTERVAL_S, 20);
    expect(record.notes).toEqual([
      'Line 2 gives Sample Interval 1e-9, but the time column steps by 2.000e-9 s; the time column was used.',
      'Line 1 states 10000 points, but 40 rows were read (is the file cut short?).',
    ]);
  });
});

describe('readScopeCsv refuses what it cannot read, naming the line and what was expected', () => {
  const good = scopeCsvText(START_S, INTERVAL_S, [ch1], { preamble: [['Instrument', 'Bench scope (invented)']] }).split('\n');
  // Line numbers: 1 preamble, 2 header, 3.. data.
  const withLine = (line: number, text: string) => good.map((l, i) => (i === line - 1 ? text : l)).join('\n');

  it('a row with a value too many', () => {
    const error = refusal(withLine(12, '-9.8e-07,0.5,0.7'));
    expect(error.line).toBe(12);
    expect(error.message).toBe('line 12: 3 values, expected 2 (Time, CH1)');
  });

  it('a row cut short', () => {
    expect(refusal(withLine(20, '-9.7e-07')).message).toBe('line 20: 1 value, expected 2 (Time, CH1)');
  });

  it('a value that is not a number, named by its column', () => {
    expect(refusal(withLine(9, '-9.88e-07,0.1.2')).message).toBe('line 9: value 2 (CH1) “0.1.2” is not a number; expected numbers such as -2.5e-06');
  });

  it('an empty value', () => {
    expect(refusal(withLine(9, '-9.88e-07,')).message).toBe('line 9: 1 value, expected 2 (Time, CH1)');
    expect(refusal(withLine(9, ',0.1')).message).toBe('line 9: value 1 (Time) is empty; expected numbers such as -2.5e-06');
  });

  it('a broken first row under the header is not taken for part of the preamble', () => {
    expect(refusal(withLine(3, 'start,0.1')).message).toBe('line 3: value 1 (Time) “start” is not a number; expected numbers such as -2.5e-06');
  });

  it('a row that starts with a number and goes on with something else, in a file without a header', () => {
    const text = scopeCsvText(START_S, INTERVAL_S, [ch1], { header: null }).replace(/^[^\n]*/, '-1.0e-06,open');
    expect(refusal(text).message).toBe('line 1: value 2 “open” is not a number; expected numbers such as -2.5e-06');
  });

  it('a missing sample: the time steps twice as far (scope records are evenly sampled)', () => {
    const lines = [...good];
    lines.splice(14, 1);
    expect(refusal(lines.join('\n')).message).toMatch(/^line 15: time steps by 4\.000e-9 s from line 14, where the record steps by 2\.000e-9 s; a scope record has evenly spaced samples/);
  });

  it('time that does not increase', () => {
    const backwards = scopeCsvText(0, -1e-9, [ch1]);
    expect(refusal(backwards).message).toMatch(/^line 3: time does not increase from row to row/);
  });

  it('a header naming more columns than the rows hold', () => {
    expect(refusal(good.map((l, i) => (i === 1 ? 'Time,CH1,CH2' : l)).join('\n')).message).toBe('line 3: 2 values, expected 3 as the header on line 2 names (Time, CH1, CH2)');
  });

  it('one column and no sample interval', () => {
    const text = scopeCsvText(0, 0, [ch1], { withoutTime: true, header: null });
    expect(refusal(text).message).toMatch(/^line 1: one value per row and no sample interval before the data; expected a time column beside the volts/);
  });

  it('a sample interval that cannot be read, when it is the time base', () => {
    const text = scopeCsvText(0, 0, [ch1], { withoutTime: true, preamble: [['Sample Interval', 'fast']] });
    expect(refusal(text).message).toBe('line 1: the sample interval “fast” cannot be read; expected seconds such as 1e-9 or 2 ns, or a rate such as 500 MS/s');
  });

  it('two time columns, a time unit that is not one, no numbers at all, one row, an empty file', () => {
    expect(refusal('Time,CH1,Time,CH2\n0,1,0,1\n1e-9,1,1e-9,1\n').message).toMatch(/^line 1: columns 1 and 3 are both named as time/);
    expect(refusal('Time (V),CH1\n0,1\n1e-9,1\n').message).toMatch(/^line 1: the time column's unit “V” is not a unit of time/);
    expect(refusal('Instrument,Bench scope\nTime,CH1\n').message).toMatch(/^no row of numbers found in 2 lines; expected rows such as/);
    expect(refusal('Time,CH1\n0,1\n').message).toBe('line 2: only one row of numbers; a scope record has many samples');
    const empty = refusal('\n \n');
    expect(empty.line).toBeNull();
    expect(empty.message).toMatch(/^the file is empty/);
  });
});
