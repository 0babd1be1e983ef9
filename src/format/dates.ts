/**
 * Lab-local calendar dates ('YYYY-MM-DD') and UTC instants written the way the lab asked
 * (its date format and time zone). Pure; no clock.
 */
import { dayOfWeek, daysBetween } from '@shared/compute/schedule';

const WEEKDAYS = ['Sunday', 'Monday', 'Tuesday', 'Wednesday', 'Thursday', 'Friday', 'Saturday'];
const MONTHS = ['January', 'February', 'March', 'April', 'May', 'June', 'July', 'August', 'September', 'October', 'November', 'December'];

/**
 * A local date in the lab's format: the tokens YYYY, MM and DD are replaced
 * ('DD/MM/YYYY' gives '14/12/2026'). An empty format gives ISO 8601.
 */
export function formatDate(date: string, format = 'YYYY-MM-DD'): string {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
  if (!m) return date;
  const f = format || 'YYYY-MM-DD';
  return f.replace('YYYY', m[1]).replace('MM', m[2]).replace('DD', m[3]);
}

/** 'Mon' for a local date. */
export function weekdayShort(date: string): string {
  return WEEKDAYS[dayOfWeek(date)].slice(0, 3);
}

/** 'Monday 14 December 2026': spelled out, so no format can be misread. */
export function longDate(date: string): string {
  const [y, mo, d] = date.split('-').map(Number);
  return `${WEEKDAYS[dayOfWeek(date)]} ${d} ${MONTHS[mo - 1]} ${y}`;
}

/** '1 day', '3 days'. */
export function dayCount(n: number): string {
  return `${n} ${Math.abs(n) === 1 ? 'day' : 'days'}`;
}

/** 'today', 'tomorrow', 'in 3 days', 'yesterday', '3 days ago' for `date` seen from `today`. */
export function relativeDay(date: string, today: string): string {
  const n = daysBetween(today, date);
  if (n === 0) return 'today';
  if (n === 1) return 'tomorrow';
  if (n === -1) return 'yesterday';
  return n > 0 ? `in ${dayCount(n)}` : `${dayCount(-n)} ago`;
}

/** A window of local dates: one date when start = end, else 'start – end'. */
export function windowText(start: string, end: string, format?: string): string {
  return start === end ? formatDate(start, format) : `${formatDate(start, format)} – ${formatDate(end, format)}`;
}

/**
 * A UTC instant from the API ('2026-12-14T09:30:00.000Z', or a DATETIME '2026-12-14 09:30:00.000'
 * that is UTC by convention) as date and time in the lab's zone and format: '14/12/2026 10:30'.
 */
export function formatInstant(value: string, timeZone: string, format?: string): string {
  const iso = /[zZ]|[+-]\d{2}:?\d{2}$/.test(value) ? value : `${value.replace(' ', 'T')}Z`;
  const t = new Date(iso);
  if (Number.isNaN(t.getTime())) return value;
  const parts: Record<string, string> = {};
  for (const p of new Intl.DateTimeFormat('en-US', {
    timeZone,
    hourCycle: 'h23',
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
  }).formatToParts(t)) {
    parts[p.type] = p.value;
  }
  return `${formatDate(`${parts.year}-${parts.month}-${parts.day}`, format)} ${parts.hour}:${parts.minute}`;
}
