// Formatting for readouts and sheets: numbers (shared with the sheet model) and local times, which
// only the page can say (its clock's zone).

export { fixed, percent } from '../../shared/format.ts';

const two = (n: number) => String(n).padStart(2, '0');

/** The local zone as an offset from UTC ("UTC+01:00"): a time on a sheet must say which clock it is. */
export function zoneLabel(at: Date): string {
  const offsetMin = -at.getTimezoneOffset();
  const sign = offsetMin < 0 ? '−' : '+';
  const abs = Math.abs(offsetMin);
  return `UTC${sign}${two(Math.floor(abs / 60))}:${two(abs % 60)}`;
}

/** Local date and time with its zone, as YYYY-MM-DD HH:MM UTC±hh:mm. */
export function localDateTime(iso: string | null): string {
  if (!iso) return '—';
  const d = new Date(iso);
  return `${d.getFullYear()}-${two(d.getMonth() + 1)}-${two(d.getDate())} ${two(d.getHours())}:${two(d.getMinutes())} ${zoneLabel(d)}`;
}

/** Local time of day, HH:MM:SS (for a table whose heading names the zone). */
export function localTime(iso: string): string {
  const d = new Date(iso);
  return `${two(d.getHours())}:${two(d.getMinutes())}:${two(d.getSeconds())}`;
}
