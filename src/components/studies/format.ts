/** Small formatting helpers for the study screens: lab dates, criterion kinds, offsets (criteria in words: src/format/criterion.ts). */
import type { CriterionKind } from '@shared/compute/criteria';
import { dayOfWeek, type Offset } from '@shared/compute/schedule';

const WEEKDAYS = ['Sun', 'Mon', 'Tue', 'Wed', 'Thu', 'Fri', 'Sat'];
const MONTHS = ['January', 'February', 'March', 'April', 'May', 'June', 'July', 'August', 'September', 'October', 'November', 'December'];

/**
 * A lab-local 'YYYY-MM-DD' date in the lab's date format (tokens YYYY, MM, DD, e.g. 'DD/MM/YYYY').
 * Unknown formats fall back to the ISO form.
 */
export function fmtDate(date: string | null | undefined, format = 'YYYY-MM-DD'): string {
  if (!date) return '';
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
  if (!m) return date;
  if (!/YYYY/.test(format) || !/MM/.test(format) || !/DD/.test(format)) return date;
  return format.replace('YYYY', m[1]).replace('MM', m[2]).replace('DD', m[3]);
}

/** Short weekday name of a local date, e.g. 'Sat'. */
export function weekday(date: string): string {
  return WEEKDAYS[dayOfWeek(date)];
}

export function isWeekend(date: string): boolean {
  const d = dayOfWeek(date);
  return d === 0 || d === 6;
}

/** 'December 2026' for '2026-12-01'. */
export function monthYear(date: string): string {
  const m = /^(\d{4})-(\d{2})/.exec(date);
  return m ? `${MONTHS[Number(m[2]) - 1]} ${m[1]}` : '';
}

/** Approximate days of an offset, to sort a schedule before it is dated. */
export function offsetDays(o: Offset, cycleHours?: number | null): number {
  switch (o.unit) {
    case 'day':
      return o.n;
    case 'week':
      return o.n * 7;
    case 'month':
      return o.n * 30.44;
    case 'cycle':
      return (o.n * (cycleHours ?? 48)) / 24;
  }
}

export function sortOffsets(list: Offset[], cycleHours?: number | null): Offset[] {
  return [...list].sort((a, b) => offsetDays(a, cycleHours) - offsetDays(b, cycleHours) || a.unit.localeCompare(b.unit));
}

export function sameOffset(a: Offset, b: Offset): boolean {
  if (a.n === 0 && b.n === 0 && a.unit !== 'cycle' && b.unit !== 'cycle') return true; // day 0 = week 0 = month 0
  return a.unit === b.unit && a.n === b.n;
}

export const CRITERION_KIND_LABELS: Readonly<Record<CriterionKind, string>> = {
  range: 'Within a range',
  change_abs: 'Change from day 0 (±)',
  change_pct: 'Change from day 0 (± %)',
  delta_e00_max: 'Colour difference from day 0 (ΔE00)',
  worst_grade: 'Worst allowed grade',
  worst_compared: 'Worst allowed versus control',
  must_pass: 'Must pass',
  none: 'No criterion (record only)',
};

