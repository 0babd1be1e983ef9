/**
 * Checkpoint schedules: templates, due dates on plain local calendar dates, windows, states,
 * and local-date helpers for a lab's time zone. Pure functions; no I/O, no clock.
 *
 * Local dates are 'YYYY-MM-DD' strings. Calendar arithmetic is done on day numbers through the
 * UTC methods of Date, which are pure proleptic Gregorian arithmetic with no time zone or DST involved.
 */

/** A checkpoint's time point, counted from the study start. */
export type Offset = { unit: 'day' | 'week' | 'month'; n: number } | { unit: 'cycle'; n: number };

/** A plain local calendar date, 'YYYY-MM-DD'. */
export type LocalDate = string;

/** Ids of the built-in schedule templates. */
export type ScheduleTemplateId = 'accelerated-12w' | 'freeze-thaw-5' | 'real-time-36m' | 'light-4w' | 'centrifuge';

/** A built-in schedule template. */
export interface ScheduleTemplate {
  id: ScheduleTemplateId;
  label: string;
  offsets: Offset[];
}

const d = (n: number): Offset => ({ unit: 'day', n });
const w = (n: number): Offset => ({ unit: 'week', n });
const m = (n: number): Offset => ({ unit: 'month', n });
const c = (n: number): Offset => ({ unit: 'cycle', n });

/** Human labels of the templates. */
export const SCHEDULE_TEMPLATE_LABELS: Readonly<Record<ScheduleTemplateId, string>> = {
  'accelerated-12w': '12-week accelerated',
  'freeze-thaw-5': 'Freeze-thaw, 5 cycles',
  'real-time-36m': '36-month real time',
  'light-4w': '4-week light',
  centrifuge: 'Centrifuge (once)',
};

/**
 * Built-in templates. real-time-36m follows ICH Q1A(R2) 2.1.7 / 2.2.7 (every 3 months in the first
 * year, every 6 months in the second, annually after); the others are common practice. None has a
 * day 0: the initial test is done once per batch for the whole study (shared/compute/study-calendar.ts);
 * a centrifuge test is itself done at the start.
 */
export const SCHEDULE_TEMPLATES: Readonly<Record<ScheduleTemplateId, ScheduleTemplate>> = {
  'accelerated-12w': {
    id: 'accelerated-12w',
    label: SCHEDULE_TEMPLATE_LABELS['accelerated-12w'],
    offsets: [w(1), w(2), w(4), w(8), w(12)],
  },
  'freeze-thaw-5': {
    id: 'freeze-thaw-5',
    label: SCHEDULE_TEMPLATE_LABELS['freeze-thaw-5'],
    offsets: [c(1), c(3), c(5)],
  },
  'real-time-36m': {
    id: 'real-time-36m',
    label: SCHEDULE_TEMPLATE_LABELS['real-time-36m'],
    offsets: [m(3), m(6), m(9), m(12), m(18), m(24), m(36)],
  },
  'light-4w': {
    id: 'light-4w',
    label: SCHEDULE_TEMPLATE_LABELS['light-4w'],
    offsets: [w(1), w(2), w(3), w(4)],
  },
  centrifuge: {
    id: 'centrifuge',
    label: SCHEDULE_TEMPLATE_LABELS.centrifuge,
    offsets: [d(0)],
  },
};

const MS_PER_DAY = 86_400_000;
const LOCAL_DATE_RE = /^(\d{4})-(\d{2})-(\d{2})$/;

interface Ymd {
  y: number;
  m: number;
  d: number;
}

/** Days in month m (1-12) of year y, Gregorian. */
export function daysInMonth(y: number, month: number): number {
  if (month === 2) return isLeapYear(y) ? 29 : 28;
  return month === 4 || month === 6 || month === 9 || month === 11 ? 30 : 31;
}

/** Gregorian leap year: divisible by 4, except centuries not divisible by 400. */
export function isLeapYear(y: number): boolean {
  return (y % 4 === 0 && y % 100 !== 0) || y % 400 === 0;
}

function parseYmd(date: LocalDate): Ymd {
  const match = LOCAL_DATE_RE.exec(date);
  if (!match) throw new RangeError(`not a YYYY-MM-DD date: ${JSON.stringify(date)}`);
  const y = Number(match[1]);
  const mo = Number(match[2]);
  const dd = Number(match[3]);
  if (mo < 1 || mo > 12 || dd < 1 || dd > daysInMonth(y, mo)) throw new RangeError(`no such date: ${date}`);
  return { y, m: mo, d: dd };
}

function pad(n: number, width: number): string {
  return String(n).padStart(width, '0');
}

function fromDayNumber(day: number): LocalDate {
  const dt = new Date(day * MS_PER_DAY);
  return `${pad(dt.getUTCFullYear(), 4)}-${pad(dt.getUTCMonth() + 1, 2)}-${pad(dt.getUTCDate(), 2)}`;
}

/** Days since 1970-01-01 of a local date (calendar count, no time zone). */
export function toDayNumber(date: LocalDate): number {
  const { y, m: mo, d: dd } = parseYmd(date);
  const ms = new Date(0).setUTCFullYear(y, mo - 1, dd);
  return Math.round(ms / MS_PER_DAY);
}

/** True for a real 'YYYY-MM-DD' calendar date. */
export function isValidLocalDate(date: unknown): date is LocalDate {
  if (typeof date !== 'string') return false;
  try {
    parseYmd(date);
    return true;
  } catch {
    return false;
  }
}

/** date + n calendar days. */
export function addDays(date: LocalDate, n: number): LocalDate {
  if (!Number.isInteger(n)) throw new RangeError(`days must be an integer, got ${n}`);
  return fromDayNumber(toDayNumber(date) + n);
}

/** Calendar days from a to b (b - a). */
export function daysBetween(a: LocalDate, b: LocalDate): number {
  return toDayNumber(b) - toDayNumber(a);
}

/** date + n calendar months, the day clamped to the target month's last day (Jan 31 + 1 month = Feb 28/29). */
export function addMonths(date: LocalDate, n: number): LocalDate {
  if (!Number.isInteger(n)) throw new RangeError(`months must be an integer, got ${n}`);
  const { y, m: mo, d: dd } = parseYmd(date);
  const index = y * 12 + (mo - 1) + n;
  const ty = Math.floor(index / 12);
  const tm = index - ty * 12 + 1;
  const td = Math.min(dd, daysInMonth(ty, tm));
  return `${pad(ty, 4)}-${pad(tm, 2)}-${pad(td, 2)}`;
}

/** Day of week of a local date, 0 = Sunday ... 6 = Saturday. */
export function dayOfWeek(date: LocalDate): number {
  return (((toDayNumber(date) + 4) % 7) + 7) % 7; // 1970-01-01 was a Thursday
}

function assertOffset(offset: Offset): void {
  if (!['day', 'week', 'month', 'cycle'].includes(offset.unit)) throw new RangeError(`unknown offset unit ${String(offset.unit)}`);
  if (!Number.isInteger(offset.n) || offset.n < 0) throw new RangeError(`offset n must be a non-negative integer, got ${offset.n}`);
  if (offset.unit === 'cycle' && offset.n < 1) throw new RangeError('cycle numbers start at 1');
}

/**
 * Due date of a checkpoint. Days and weeks add calendar days; a month is a calendar month from the
 * start date, clamped to that month's last day (each month offset is counted from the start, so
 * Jan 31 + 2 months = Mar 31); cycle n of cycleHours each is due start + ceil(n x cycleHours / 24) days.
 */
export function checkpointDate(startLocalDate: LocalDate, offset: Offset, cycleHours?: number): LocalDate {
  assertOffset(offset);
  switch (offset.unit) {
    case 'day':
      return addDays(startLocalDate, offset.n);
    case 'week':
      return addDays(startLocalDate, 7 * offset.n);
    case 'month':
      return addMonths(startLocalDate, offset.n);
    case 'cycle': {
      if (cycleHours === undefined || !Number.isFinite(cycleHours) || cycleHours <= 0) {
        throw new RangeError('a cycle offset needs a positive cycle length in hours');
      }
      // Slack so that float noise (e.g. 3 x 8 / 24 = 1.0000000000000002) does not add a day.
      return addDays(startLocalDate, Math.ceil((offset.n * cycleHours) / 24 - 1e-9));
    }
  }
}

/** Checkpoint window in days before and after the due date. */
export interface CheckpointWindow {
  before: number;
  after: number;
}

/**
 * Default window: day 0 (any zero offset) 0 days before and 1 after (the initial test cannot come
 * before the start, and may slip to the next day); ±1 day up to week 4 inclusive; ±3 days up to
 * week 12 inclusive; ±7 days after week 12 and for every month offset from month 1 on; cycles ±1 day.
 */
export function defaultWindowDays(offset: Offset): CheckpointWindow {
  assertOffset(offset);
  if (offset.unit === 'cycle') return { before: 1, after: 1 };
  if (offset.n === 0) return { before: 0, after: 1 };
  if (offset.unit === 'month') return { before: 7, after: 7 };
  const days = offset.unit === 'week' ? offset.n * 7 : offset.n;
  if (days <= 28) return { before: 1, after: 1 };
  if (days <= 84) return { before: 3, after: 3 };
  return { before: 7, after: 7 };
}

/** Label of a checkpoint: 'Day 0' (any zero offset), 'Day 3', 'Week 4', 'Month 3', 'Cycle 5'. */
export function offsetLabel(offset: Offset): string {
  if (offset.n === 0 && offset.unit !== 'cycle') return 'Day 0';
  const unit = offset.unit.charAt(0).toUpperCase() + offset.unit.slice(1);
  return `${unit} ${offset.n}`;
}

const formatterCache = new Map<string, Intl.DateTimeFormat>();

function formatterFor(timeZone: string): Intl.DateTimeFormat {
  let f = formatterCache.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-US', {
      timeZone,
      calendar: 'gregory',
      numberingSystem: 'latn',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
    });
    formatterCache.set(timeZone, f);
  }
  return f;
}

/** True when the runtime knows the IANA time zone name (e.g. 'Europe/Berlin'). */
export function isValidTimeZone(timeZone: unknown): timeZone is string {
  if (typeof timeZone !== 'string' || timeZone.length === 0) return false;
  try {
    formatterFor(timeZone);
    return true;
  } catch {
    return false;
  }
}

/**
 * The calendar date an instant falls on in a time zone, 'YYYY-MM-DD' (a study started at 23:30
 * lab time keeps that day's date). Throws RangeError on an invalid instant or zone.
 */
export function localDateInZone(instant: Date, timeZone: string): LocalDate {
  if (!(instant instanceof Date) || Number.isNaN(instant.getTime())) throw new RangeError('invalid instant');
  if (!isValidTimeZone(timeZone)) throw new RangeError(`unknown time zone: ${JSON.stringify(timeZone)}`);
  let y = '';
  let mo = '';
  let dd = '';
  for (const part of formatterFor(timeZone).formatToParts(instant)) {
    if (part.type === 'year') y = part.value;
    else if (part.type === 'month') mo = part.value;
    else if (part.type === 'day') dd = part.value;
  }
  return `${y.padStart(4, '0')}-${mo}-${dd}`;
}

/** State of a checkpoint. */
export type CheckpointState = 'upcoming' | 'due' | 'overdue' | 'done' | 'missed';

/**
 * State of a checkpoint on a given local day: 'done' or 'missed' when so recorded (done wins if both),
 * else 'upcoming' before the window opens, 'due' inside the window (ends inclusive), 'overdue' after it.
 */
export function checkpointState(
  dueDate: LocalDate,
  windowBefore: number,
  windowAfter: number,
  todayLocal: LocalDate,
  done: boolean,
  missed: boolean,
): CheckpointState {
  if (done) return 'done';
  if (missed) return 'missed';
  const delta = daysBetween(dueDate, todayLocal);
  if (delta < -windowBefore) return 'upcoming';
  if (delta <= windowAfter) return 'due';
  return 'overdue';
}

/** Why a due date may need moving. */
export type ScheduleWarning = 'weekend' | 'holiday';

/** One generated checkpoint. */
export interface ScheduledCheckpoint {
  offset: Offset;
  label: string;
  dueDate: LocalDate;
  windowBefore: number;
  windowAfter: number;
  /** dueDate - windowBefore. */
  windowStart: LocalDate;
  /** dueDate + windowAfter. */
  windowEnd: LocalDate;
  warnings: ScheduleWarning[];
}

/** Input of {@link generateSchedule}. */
export interface ScheduleInput {
  startDate: LocalDate;
  offsets: ReadonlyArray<Offset>;
  /** Length of one cycle in hours (needed for cycle offsets). */
  cycleHours?: number;
  /** Lab holidays, 'YYYY-MM-DD'. */
  holidays?: ReadonlyArray<LocalDate>;
}

/**
 * Builds a schedule: due date, default window, label and weekend/holiday warnings per offset,
 * sorted by due date (offsets on the same date keep their input order). Dates are not moved;
 * the warnings let the planner decide.
 */
export function generateSchedule({ startDate, offsets, cycleHours, holidays = [] }: ScheduleInput): ScheduledCheckpoint[] {
  parseYmd(startDate);
  const holidaySet = new Set(holidays.map((h) => fromDayNumber(toDayNumber(h))));
  const items = offsets.map((offset, index) => {
    const dueDate = checkpointDate(startDate, offset, cycleHours);
    const { before, after } = defaultWindowDays(offset);
    const warnings: ScheduleWarning[] = [];
    const dow = dayOfWeek(dueDate);
    if (dow === 0 || dow === 6) warnings.push('weekend');
    if (holidaySet.has(dueDate)) warnings.push('holiday');
    const item: ScheduledCheckpoint = {
      offset: { ...offset },
      label: offsetLabel(offset),
      dueDate,
      windowBefore: before,
      windowAfter: after,
      windowStart: addDays(dueDate, -before),
      windowEnd: addDays(dueDate, after),
      warnings,
    };
    return { item, index, day: toDayNumber(dueDate) };
  });
  items.sort((a, b) => a.day - b.day || a.index - b.index);
  return items.map((x) => x.item);
}
