// Scope records written as CSV text, as bench oscilloscopes commonly export them: optional
// key/value lines before the header, a header, time in seconds in scientific notation, then one
// column per channel. The demo bench writes its invented scope records with this, and the reader's
// tests write every layout the reader (scope-csv.ts) takes. Every layout is invented.

export interface ScopeCsvLayout {
  separator?: ',' | ';' | '\t';
  /** Key/value lines before the header. */
  preamble?: Array<[string, string]>;
  /** Header cells, time first when there is a time column; null for no header. */
  header?: string[] | null;
  /** Write no time column (the preamble must then give the interval). */
  withoutTime?: boolean;
  decimalComma?: boolean;
  /** Significant digits of the times written. */
  timeDigits?: number;
  lineEnd?: string;
}

export function scopeCsvText(startS: number, intervalS: number, channels: ArrayLike<number>[], layout: ScopeCsvLayout = {}): string {
  const sep = layout.separator ?? ',';
  const number = (value: number, digits: number) => {
    const text = value.toExponential(digits - 1);
    return layout.decimalComma ? text.replace('.', ',') : text;
  };
  const lines: string[] = [];
  for (const [key, value] of layout.preamble ?? []) lines.push(`${key}${sep}${value}`);
  const header = layout.header === undefined ? [...(layout.withoutTime ? [] : ['Time']), ...channels.map((_, k) => `CH${k + 1}`)] : layout.header;
  if (header) lines.push(header.join(sep));
  for (let i = 0; i < channels[0].length; i++) {
    const cells = channels.map((values) => number(values[i], 6));
    if (!layout.withoutTime) cells.unshift(number(startS + i * intervalS, layout.timeDigits ?? 8));
    lines.push(cells.join(sep));
  }
  return lines.join(layout.lineEnd ?? '\n') + (layout.lineEnd ?? '\n');
}
