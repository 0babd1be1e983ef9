/** Small formatting helpers for the study screens: lab dates, criteria in words, offsets. */
import { COMPARED_LEVEL_LABELS, type Criterion, type CriterionKind } from '@shared/compute/criteria';
import { dayOfWeek, type Offset } from '@shared/compute/schedule';
import type { AttributeScaleStep } from '@shared/domain';

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
  worst_grade: 'Worst allowed grade',
  worst_compared: 'Worst allowed versus control',
  must_pass: 'Must pass',
  none: 'No criterion (record only)',
};

function n(x: number): string {
  return String(Math.round(x * 1e6) / 1e6);
}

/** A criterion in words, e.g. "±0.5 pH from day 0", "at worst 1 (faint oil sheen)". */
export function criterionText(c: Criterion | null | undefined, unit?: string | null, scale?: AttributeScaleStep[] | null): string {
  if (!c) return 'No criterion';
  const u = unit ? ` ${unit}` : '';
  switch (c.kind) {
    case 'range':
      if (c.min != null && c.max != null) return `${n(c.min)}–${n(c.max)}${u}`;
      if (c.min != null) return `at least ${n(c.min)}${u}`;
      if (c.max != null) return `at most ${n(c.max)}${u}`;
      return 'range not set';
    case 'change_abs':
      return `within ±${n(c.max)}${u} of day 0`;
    case 'change_pct':
      return `within ±${n(c.max)} % of day 0`;
    case 'worst_grade': {
      const label = scale?.find((s) => s.grade === c.grade)?.label;
      return `grade ${c.grade}${label ? ` (${label})` : ''} at worst`;
    }
    case 'worst_compared':
      return `${COMPARED_LEVEL_LABELS[c.level]} at worst, versus control`;
    case 'must_pass':
      return 'must pass';
    case 'none':
      return 'recorded, not judged';
  }
}
