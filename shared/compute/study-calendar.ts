/**
 * The calendar of a study as labs run it (common practice, no published source; the trade's usual
 * way of working, as in the DESIGN notes):
 *  - one initial (time-zero) test per batch, on the start date, before the samples go into their
 *    conditions; every condition of that batch starts from it, so no condition has a day 0 of its own
 *    (a centrifuge test, which is itself done at the start, is the one exception);
 *  - a control reading of the same batch on the same day as every pull of a stressed or real-time
 *    condition, so the compared-with-control attributes are judged side by side; one control reading
 *    serves every pull due that day; a pull due on the start date is compared with the initial test.
 * Pure functions; no I/O.
 */
import type { ConditionKind, ConditionRole } from '../domain';
import { daysBetween, defaultWindowDays, generateSchedule, offsetLabel, type LocalDate, type Offset, type ScheduledCheckpoint } from './schedule';

/** Label of the study-level initial test. */
export const INITIAL_LABEL = 'Initial';

export interface CalendarCondition<K> {
  key: K;
  name: string;
  role: ConditionRole;
  kind: ConditionKind;
  offsets: readonly Offset[];
  cycleHours?: number;
  /** Pair each pull with a same-day control reading (default true); off needs a reason. */
  pairControl?: boolean;
  pairingOffReason?: string | null;
}

export interface CalendarPull extends ScheduledCheckpoint {
  /** The due date of the control reading it is judged against; the start date means the initial test; null: none. */
  controlDate: LocalDate | null;
}

export interface ControlPull extends ScheduledCheckpoint {
  /** Added for pairing (not in the control's own schedule). */
  added: boolean;
  /** The pulls this control reading serves: condition name and pull label. */
  serves: { key: unknown; name: string; label: string }[];
}

export interface StudyCalendar<K> {
  /** The initial test: one per batch, due on the start date (window: that day or the next). */
  initial: { label: string; dueDate: LocalDate; windowBefore: number; windowAfter: number };
  /** The control condition pulls are paired with (the first condition with role 'control'), or null. */
  controlKey: K | null;
  /** Every condition's pulls; the control's own list includes the readings added for pairing. */
  conditions: { key: K; name: string; pulls: (CalendarPull | ControlPull)[] }[];
  /** Plain-language warnings about pairing. */
  warnings: string[];
}

/** A day-0 checkpoint is allowed only for a centrifuge test (done at the start, it is a stress test, not a baseline). */
export function dayZeroAllowed(kind: ConditionKind): boolean {
  return kind === 'mechanical';
}

export function isDayZero(o: Offset): boolean {
  return o.unit !== 'cycle' && o.n === 0;
}

/**
 * Builds the calendar: the initial test, each condition's pulls with the date of the control reading
 * it is paired with, and the control's pulls extended so every paired pull has one on its day.
 */
export function studyCalendar<K>(startDate: LocalDate, conditions: readonly CalendarCondition<K>[]): StudyCalendar<K> {
  const day0 = defaultWindowDays({ unit: 'day', n: 0 });
  const warnings: string[] = [];
  const control = conditions.find((c) => c.role === 'control') ?? null;
  const extraControls = conditions.filter((c) => c.role === 'control' && c !== control);
  if (extraControls.length) {
    warnings.push(`More than one control condition: pulls are paired with ${control!.name}; ${extraControls.map((c) => c.name).join(', ')} is read on its own schedule.`);
  }
  const schedules = conditions.map((c) => ({
    c,
    schedule: generateSchedule({ startDate, offsets: c.offsets, cycleHours: c.cycleHours }),
  }));

  const controlOwn = control ? schedules.find((s) => s.c === control)!.schedule : [];
  const controlByDate = new Map<LocalDate, ControlPull>();
  for (const s of controlOwn) controlByDate.set(s.dueDate, { ...s, added: false, serves: [] });

  const out: StudyCalendar<K>['conditions'] = [];
  let lastServed: { date: LocalDate; label: string } | null = null;
  for (const { c, schedule } of schedules) {
    if (c === control) continue;
    const paired = control != null && c.pairControl !== false;
    const unpaired: string[] = [];
    const pulls: CalendarPull[] = schedule.map((s) => {
      if (s.dueDate === startDate) return { ...s, controlDate: startDate };
      if (!paired) {
        unpaired.push(s.label);
        return { ...s, controlDate: null };
      }
      let cp = controlByDate.get(s.dueDate);
      if (!cp) {
        const days = daysBetween(startDate, s.dueDate);
        const offset: Offset = s.offset.unit === 'cycle' ? { unit: 'day', n: days } : s.offset;
        // Read on the pull's day, within the pull's own window.
        cp = { ...s, offset, label: offsetLabel(offset), added: true, serves: [] };
        controlByDate.set(s.dueDate, cp);
      }
      cp.serves.push({ key: c.key, name: c.name, label: s.label });
      if (!lastServed || s.dueDate > lastServed.date) lastServed = { date: s.dueDate, label: `${c.name} ${s.label}` };
      return { ...s, controlDate: s.dueDate };
    });
    if (unpaired.length && control == null) {
      // Said once below for the whole plan.
    } else if (unpaired.length) {
      const why = c.pairingOffReason ? ` (pairing turned off: ${c.pairingOffReason})` : '';
      warnings.push(`${c.name}: ${unpaired.join(', ')} ${unpaired.length === 1 ? 'has' : 'have'} no same-day control reading${why}.`);
    }
    out.push({ key: c.key, name: c.name, pulls });
  }
  if (control == null && schedules.some((s) => s.schedule.some((p) => p.dueDate !== startDate))) {
    warnings.push('No control condition: no pull has a same-day control reading to compare odor, color and appearance with.');
  }
  if (control) {
    const list = [...controlByDate.values()].sort((a, b) => a.dueDate.localeCompare(b.dueDate));
    const ownLast = controlOwn.length ? controlOwn[controlOwn.length - 1] : null;
    const served = lastServed as { date: LocalDate; label: string } | null;
    if (served && (!ownLast || ownLast.dueDate < served.date)) {
      const added = list.filter((x) => x.added).length;
      warnings.push(
        `${control.name}'s own schedule ends ${ownLast ? `at ${ownLast.label} (${ownLast.dueDate})` : 'before any pull'}, before the pulls it serves (to ${served.label}, ${served.date}): ${added} control ${added === 1 ? 'reading is' : 'readings are'} added on the pull dates.`,
      );
    }
    out.splice(
      conditions.findIndex((c) => c === control),
      0,
      { key: control.key, name: control.name, pulls: list },
    );
  }
  return { initial: { label: INITIAL_LABEL, dueDate: startDate, windowBefore: day0.before, windowAfter: day0.after }, controlKey: control?.key ?? null, conditions: out, warnings };
}

/** Readings a plan asks for, and what one initial test per batch saves against a day 0 in every condition. */
export interface ReadingCounts {
  initial: number;
  pulls: number;
  /** Of `pulls`: control readings added so every pull has one on its day. */
  addedControl: number;
  total: number;
  /** What a day 0 in every condition (other than a centrifuge test) would have asked for. */
  perConditionDayZero: number;
  saved: number;
}

export function readingCounts<K>(calendar: StudyCalendar<K>, conditionKinds: ReadonlyMap<K, ConditionKind>, batches: number, samplesPerCell: number, attributes: number): ReadingCounts {
  const perSet = batches * samplesPerCell * attributes;
  const initial = perSet;
  let pulls = 0;
  let addedControl = 0;
  for (const c of calendar.conditions) {
    for (const p of c.pulls) {
      pulls += perSet;
      if ('added' in p && p.added) addedControl += perSet;
    }
  }
  const withDayZero = calendar.conditions.filter((c) => !dayZeroAllowed(conditionKinds.get(c.key)!)).length;
  const perConditionDayZero = withDayZero * perSet;
  return { initial, pulls, addedControl, total: initial + pulls, perConditionDayZero, saved: Math.max(0, perConditionDayZero - initial) };
}

/** Nominal length of an offset unit in days, to compare gaps between pulls (a month as 365.25 / 12 days). */
function nominalDays(o: Offset, cycleHours?: number): number {
  switch (o.unit) {
    case 'day':
      return o.n;
    case 'week':
      return 7 * o.n;
    case 'month':
      return (o.n * 365.25) / 12;
    case 'cycle':
      return (o.n * (cycleHours ?? 24)) / 24;
  }
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(s.length / 2);
  return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
}

/** "8 weeks", "9 months", "12 days": a gap in the unit both ends share, else in days. */
function gapText(a: Offset | null, b: Offset, days: number): string {
  const unit = a == null || a.unit === b.unit ? b.unit : 'day';
  const n = unit === b.unit ? b.n - (a?.n ?? 0) : Math.round(days);
  const word = unit === 'cycle' ? 'cycle' : unit;
  return `${n} ${word}${n === 1 ? '' : 's'}`;
}

/** The interval in the unit every offset of the condition shares ("2 weeks"), else in days. */
function intervalText(c: GapCondition, days: number): string {
  const unit = c.offsets.every((o) => o.unit === c.offsets[0].unit) ? c.offsets[0].unit : 'day';
  const n = Math.round((days / nominalDays({ unit, n: 1 } as Offset, c.cycleHours)) * 10) / 10;
  return `${n} ${unit}${n === 1 ? '' : 's'}`;
}

export interface GapCondition {
  name: string;
  offsets: readonly Offset[];
  cycleHours?: number;
}

/**
 * Warns about a condition left without a pull for over twice its interval. The interval is the
 * median gap between consecutive pulls of that condition, counted from the initial test; a gap warns
 * when it is over twice that median and over twice the gap before it (a schedule that widens step by
 * step, such as ICH Q1A(R2) 2.2.7's every 3 months in the first year, every 6 in the second and
 * annually after, is planned that way). Gaps are compared in nominal days of the offsets (a month is
 * 365.25 / 12 days), so calendar month lengths do not tip the balance. Common practice, no published
 * source. Needs at least three gaps.
 */
export function pullGapWarnings(conditions: readonly GapCondition[]): string[] {
  const out: string[] = [];
  for (const c of conditions) {
    const points = [...c.offsets]
      .map((o) => ({ o, d: nominalDays(o, c.cycleHours) }))
      .filter((p) => p.d > 0)
      .sort((a, b) => a.d - b.d);
    const gaps = points.map((p, i) => ({ from: i ? points[i - 1].o : null, to: p.o, days: p.d - (i ? points[i - 1].d : 0) }));
    if (gaps.length < 3) continue;
    const interval = median(gaps.map((g) => g.days));
    const wide = gaps.filter((g, i) => i > 0 && g.days > 2 * interval + 1e-9 && g.days > 2 * gaps[i - 1].days + 1e-9);
    for (const g of wide) {
      const from = g.from ? offsetLabel(g.from) : INITIAL_LABEL;
      const usual = intervalText(c, interval);
      out.push(
        `${c.name}: no pull between ${from} and ${offsetLabel(g.to)} (${gapText(g.from, g.to, g.days)}), over twice its usual interval (${usual}, the median gap between its pulls). Add a pull in between, or keep the gap on purpose.`,
      );
    }
  }
  return out;
}
