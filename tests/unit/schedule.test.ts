import { describe, expect, it } from 'vitest';
import {
  SCHEDULE_TEMPLATES,
  SCHEDULE_TEMPLATE_LABELS,
  addDays,
  addMonths,
  checkpointDate,
  checkpointState,
  dayOfWeek,
  daysBetween,
  defaultWindowDays,
  generateSchedule,
  isLeapYear,
  isValidLocalDate,
  isValidTimeZone,
  localDateInZone,
  offsetLabel,
  type Offset,
} from '../../shared/compute/schedule';

describe('templates', () => {
  it('real-time-36m follows the ICH Q1A(R2) long-term testing frequency', () => {
    // ICH Q1A(R2) 2.1.7 / 2.2.7: long-term testing "every 3 months over the first year, every 6 months
    // over the second year, and annually thereafter through the proposed shelf life". The initial point is the
    // study's initial test, done once per batch (shared/compute/study-calendar.ts), so the template starts at month 3.
    const expected: number[] = [];
    for (let month = 3; month <= 12; month += 3) expected.push(month);
    for (let month = 18; month <= 24; month += 6) expected.push(month);
    for (let month = 36; month <= 36; month += 12) expected.push(month);
    const t = SCHEDULE_TEMPLATES['real-time-36m'];
    expect(t.offsets.every((o) => o.unit === 'month')).toBe(true);
    expect(t.offsets.map((o) => o.n)).toEqual(expected);
    expect(expected).toEqual([3, 6, 9, 12, 18, 24, 36]);
  });

  it('holds the common-practice templates named in DESIGN.md', () => {
    // DESIGN.md "Studies" and "Checkpoint" (common practice, no published source).
    const show = (id: keyof typeof SCHEDULE_TEMPLATES) => SCHEDULE_TEMPLATES[id].offsets.map(offsetLabel);
    // No storage template has a day 0: the initial test is the study's, once per batch. A centrifuge test is itself done at the start.
    expect(show('accelerated-12w')).toEqual(['Week 1', 'Week 2', 'Week 4', 'Week 8', 'Week 12']);
    expect(show('freeze-thaw-5')).toEqual(['Cycle 1', 'Cycle 3', 'Cycle 5']);
    expect(show('light-4w')).toEqual(['Week 1', 'Week 2', 'Week 3', 'Week 4']);
    expect(show('centrifuge')).toEqual(['Day 0']);
    expect(show('real-time-36m')[0]).toBe('Month 3');
    for (const [id, t] of Object.entries(SCHEDULE_TEMPLATES)) {
      expect(t.id).toBe(id);
      expect(t.label).toBe(SCHEDULE_TEMPLATE_LABELS[t.id]);
    }
  });
});

describe('calendar arithmetic', () => {
  it('knows Gregorian leap years', () => {
    // Gregorian rule: every 4th year, except centuries not divisible by 400 (Inter gravissimas, 1582).
    expect(isLeapYear(2028)).toBe(true);
    expect(isLeapYear(2027)).toBe(false);
    expect(isLeapYear(2000)).toBe(true);
    expect(isLeapYear(2100)).toBe(false);
  });

  it('clamps month offsets to the last day of the month', () => {
    // Gregorian calendar: 2028 is a leap year, 2027 and 2100 are not (constructed edge cases).
    expect(checkpointDate('2028-01-31', { unit: 'month', n: 1 })).toBe('2028-02-29');
    expect(checkpointDate('2027-01-31', { unit: 'month', n: 1 })).toBe('2027-02-28');
    expect(checkpointDate('2028-01-31', { unit: 'month', n: 2 })).toBe('2028-03-31');
    expect(checkpointDate('2028-01-31', { unit: 'month', n: 3 })).toBe('2028-04-30');
    expect(checkpointDate('2028-08-31', { unit: 'month', n: 1 })).toBe('2028-09-30');
    expect(checkpointDate('2099-12-31', { unit: 'month', n: 2 })).toBe('2100-02-28');
    expect(checkpointDate('2027-11-30', { unit: 'month', n: 3 })).toBe('2028-02-29');
    expect(checkpointDate('2028-02-29', { unit: 'month', n: 12 })).toBe('2029-02-28');
    expect(checkpointDate('2028-02-29', { unit: 'month', n: 48 })).toBe('2032-02-29');
    expect(checkpointDate('2026-05-15', { unit: 'month', n: 36 })).toBe('2029-05-15');
    expect(checkpointDate('2026-05-15', { unit: 'month', n: 0 })).toBe('2026-05-15');
    expect(addMonths('2026-03-31', -1)).toBe('2026-02-28');
  });

  it('adds days and weeks across month, year and DST boundaries without drift', () => {
    // Gregorian calendar (constructed edge cases): 2028 has 366 days; EU summer time begins 2026-03-29
    // and US daylight time 2026-03-08, which must not shift a plain date.
    expect(checkpointDate('2026-12-25', { unit: 'week', n: 1 })).toBe('2027-01-01');
    expect(checkpointDate('2028-02-28', { unit: 'day', n: 1 })).toBe('2028-02-29');
    expect(checkpointDate('2028-01-01', { unit: 'day', n: 366 })).toBe('2029-01-01');
    expect(checkpointDate('2026-03-01', { unit: 'week', n: 4 })).toBe('2026-03-29');
    expect(checkpointDate('2026-03-28', { unit: 'day', n: 1 })).toBe('2026-03-29');
    expect(checkpointDate('2026-01-05', { unit: 'week', n: 12 })).toBe('2026-03-30');
    expect(daysBetween('2028-01-01', '2029-01-01')).toBe(366);
    expect(daysBetween('2027-01-01', '2028-01-01')).toBe(365);
    expect(addDays('2026-03-01', -1)).toBe('2026-02-28');
  });

  it('counts freeze-thaw cycles in whole days, rounding up', () => {
    // DESIGN.md freeze-thaw cycle, common practice: -10 °C 24 h then 25 °C 24 h = 48 h per cycle.
    expect(checkpointDate('2026-02-02', { unit: 'cycle', n: 1 }, 48)).toBe('2026-02-04');
    expect(checkpointDate('2026-02-02', { unit: 'cycle', n: 5 }, 48)).toBe('2026-02-12');
    // Constructed edge cases: 12 h cycles -> cycle 3 = 36 h -> 2 days; 8 h x 3 = 24 h exactly -> 1 day.
    expect(checkpointDate('2026-02-02', { unit: 'cycle', n: 3 }, 12)).toBe('2026-02-04');
    expect(checkpointDate('2026-02-02', { unit: 'cycle', n: 3 }, 8)).toBe('2026-02-03');
    expect(() => checkpointDate('2026-02-02', { unit: 'cycle', n: 1 })).toThrow(RangeError);
    expect(() => checkpointDate('2026-02-02', { unit: 'cycle', n: 0 }, 48)).toThrow(RangeError);
  });

  it('rejects malformed dates and offsets', () => {
    // Constructed edge cases.
    expect(isValidLocalDate('2028-02-29')).toBe(true);
    expect(isValidLocalDate('2027-02-29')).toBe(false);
    expect(isValidLocalDate('2026-13-01')).toBe(false);
    expect(isValidLocalDate('2026-1-01')).toBe(false);
    expect(isValidLocalDate(20260101)).toBe(false);
    expect(() => checkpointDate('2027-02-29', { unit: 'day', n: 0 })).toThrow(RangeError);
    expect(() => checkpointDate('2026-01-01', { unit: 'week', n: 1.5 })).toThrow(RangeError);
    expect(() => checkpointDate('2026-01-01', { unit: 'day', n: -1 })).toThrow(RangeError);
  });

  it('knows the day of the week', () => {
    // 1 January 2026 is a Thursday and 25 December 2026 a Friday (Gregorian calendar, from memory).
    expect(dayOfWeek('2026-01-01')).toBe(4);
    expect(dayOfWeek('2026-12-25')).toBe(5);
    expect(dayOfWeek('1970-01-01')).toBe(4);
  });
});

describe('defaultWindowDays', () => {
  it('widens with the time point (common practice, no published source)', () => {
    // DESIGN.md: "±1 day for weekly points, ±7 days for monthly"; the ±3 band and day 0 = 0 before / 1 after
    // are this project's choices.
    const win = (o: Offset) => defaultWindowDays(o);
    expect(win({ unit: 'day', n: 0 })).toEqual({ before: 0, after: 1 });
    expect(win({ unit: 'month', n: 0 })).toEqual({ before: 0, after: 1 });
    expect(win({ unit: 'week', n: 1 })).toEqual({ before: 1, after: 1 });
    expect(win({ unit: 'week', n: 4 })).toEqual({ before: 1, after: 1 });
    expect(win({ unit: 'day', n: 28 })).toEqual({ before: 1, after: 1 });
    expect(win({ unit: 'day', n: 29 })).toEqual({ before: 3, after: 3 });
    expect(win({ unit: 'week', n: 8 })).toEqual({ before: 3, after: 3 });
    expect(win({ unit: 'week', n: 12 })).toEqual({ before: 3, after: 3 });
    expect(win({ unit: 'week', n: 13 })).toEqual({ before: 7, after: 7 });
    expect(win({ unit: 'month', n: 1 })).toEqual({ before: 7, after: 7 });
    expect(win({ unit: 'month', n: 36 })).toEqual({ before: 7, after: 7 });
    expect(win({ unit: 'cycle', n: 5 })).toEqual({ before: 1, after: 1 });
  });
});

describe('local dates in a time zone', () => {
  // Offsets from the IANA tz database: Berlin is UTC+1 in winter, UTC+2 in summer from the last Sunday of
  // March (EU Directive 2000/84/EC); Los Angeles is UTC-8, UTC-7 from the second Sunday of March
  // (US Energy Policy Act of 2005), i.e. 2026-03-08.
  it('keeps the lab’s local date on either side of midnight', () => {
    // 2026-03-01T23:30Z is 2026-03-02 00:30 in Berlin and 2026-03-01 15:30 in Los Angeles.
    const lateUtc = new Date('2026-03-01T23:30:00Z');
    expect(localDateInZone(lateUtc, 'Europe/Berlin')).toBe('2026-03-02');
    expect(localDateInZone(lateUtc, 'America/Los_Angeles')).toBe('2026-03-01');
    // 2026-03-02T07:30Z is 2026-03-01 23:30 in Los Angeles and 2026-03-02 08:30 in Berlin.
    const morningUtc = new Date('2026-03-02T07:30:00Z');
    expect(localDateInZone(morningUtc, 'America/Los_Angeles')).toBe('2026-03-01');
    expect(localDateInZone(morningUtc, 'Europe/Berlin')).toBe('2026-03-02');
    // 2026-03-01T22:30Z is 23:30 on 2026-03-01 in Berlin: a study started then keeps 1 March.
    expect(localDateInZone(new Date('2026-03-01T22:30:00Z'), 'Europe/Berlin')).toBe('2026-03-01');
  });

  it('follows summer time', () => {
    // 2026-07-01T06:30Z is 2026-06-30 23:30 PDT (UTC-7); 2026-07-01T22:30Z is 2026-07-02 00:30 CEST (UTC+2).
    expect(localDateInZone(new Date('2026-07-01T06:30:00Z'), 'America/Los_Angeles')).toBe('2026-06-30');
    expect(localDateInZone(new Date('2026-07-01T22:30:00Z'), 'Europe/Berlin')).toBe('2026-07-02');
    // In winter the same UTC time is still 1 March in Berlin (23:30 CET, UTC+1).
    expect(localDateInZone(new Date('2026-03-01T22:30:00Z'), 'Europe/Berlin')).toBe('2026-03-01');
  });

  it('validates time zone names', () => {
    // IANA tz database names; 'Mars/Olympus' is a constructed invalid name.
    expect(isValidTimeZone('Europe/Berlin')).toBe(true);
    expect(isValidTimeZone('America/Los_Angeles')).toBe(true);
    expect(isValidTimeZone('UTC')).toBe(true);
    expect(isValidTimeZone('Mars/Olympus')).toBe(false);
    expect(isValidTimeZone('')).toBe(false);
    expect(isValidTimeZone(undefined)).toBe(false);
    expect(() => localDateInZone(new Date('2026-01-01T00:00:00Z'), 'Mars/Olympus')).toThrow(RangeError);
    expect(() => localDateInZone(new Date(Number.NaN), 'UTC')).toThrow(RangeError);
  });
});

describe('checkpointState', () => {
  // Constructed edge cases around a week-4 checkpoint due 2026-03-02 with ±1 day.
  it('is upcoming before the window, due inside it (ends inclusive), overdue after', () => {
    expect(checkpointState('2026-03-02', 1, 1, '2026-02-28', false, false)).toBe('upcoming');
    expect(checkpointState('2026-03-02', 1, 1, '2026-03-01', false, false)).toBe('due');
    expect(checkpointState('2026-03-02', 1, 1, '2026-03-02', false, false)).toBe('due');
    expect(checkpointState('2026-03-02', 1, 1, '2026-03-03', false, false)).toBe('due');
    expect(checkpointState('2026-03-02', 1, 1, '2026-03-04', false, false)).toBe('overdue');
  });

  it('reports recorded outcomes first', () => {
    expect(checkpointState('2026-03-02', 1, 1, '2026-01-01', true, false)).toBe('done');
    expect(checkpointState('2026-03-02', 1, 1, '2026-04-01', false, true)).toBe('missed');
    expect(checkpointState('2026-03-02', 1, 1, '2026-04-01', true, true)).toBe('done');
  });

  it('handles day 0 with no window before it', () => {
    expect(checkpointState('2026-03-02', 0, 1, '2026-03-01', false, false)).toBe('upcoming');
    expect(checkpointState('2026-03-02', 0, 1, '2026-03-03', false, false)).toBe('due');
  });
});

describe('generateSchedule', () => {
  it('builds the 12-week accelerated schedule with labels, windows and weekend warnings', () => {
    // Template from DESIGN.md (common practice); start Monday 2026-01-05 (weekday from the Gregorian calendar).
    const s = generateSchedule({ startDate: '2026-01-05', offsets: SCHEDULE_TEMPLATES['accelerated-12w'].offsets });
    expect(s.map((c) => [c.label, c.dueDate, c.windowBefore, c.windowAfter])).toEqual([
      ['Week 1', '2026-01-12', 1, 1],
      ['Week 2', '2026-01-19', 1, 1],
      ['Week 4', '2026-02-02', 1, 1],
      ['Week 8', '2026-03-02', 3, 3],
      ['Week 12', '2026-03-30', 3, 3],
    ]);
    expect(s[3].windowStart).toBe('2026-02-27');
    expect(s[3].windowEnd).toBe('2026-03-05');
    expect(s.every((c) => c.warnings.length === 0)).toBe(true);
  });

  it('warns on weekends and lab holidays and sorts mixed offsets by date', () => {
    // 2026-12-25 is a Friday, 2026-12-26 a Saturday (Gregorian calendar, from memory); the holiday list is the lab's.
    const s = generateSchedule({
      startDate: '2026-12-11',
      offsets: [
        { unit: 'week', n: 2 },
        { unit: 'day', n: 0 },
        { unit: 'day', n: 15 },
        { unit: 'cycle', n: 1 },
      ],
      cycleHours: 48,
      holidays: ['2026-12-25'],
    });
    expect(s.map((c) => [c.label, c.dueDate, c.warnings])).toEqual([
      ['Day 0', '2026-12-11', []],
      ['Cycle 1', '2026-12-13', ['weekend']],
      ['Week 2', '2026-12-25', ['holiday']],
      ['Day 15', '2026-12-26', ['weekend']],
    ]);
  });

  it('schedules 36 months of real time from a month end', () => {
    // ICH Q1A(R2) frequency (see above) from 2027-08-31; month ends clamp (Gregorian calendar: 2028 is a leap year).
    const s = generateSchedule({ startDate: '2027-08-31', offsets: SCHEDULE_TEMPLATES['real-time-36m'].offsets });
    expect(s.map((c) => c.dueDate)).toEqual([
      '2027-11-30',
      '2028-02-29',
      '2028-05-31',
      '2028-08-31',
      '2029-02-28',
      '2029-08-31',
      '2030-08-31',
    ]);
    expect(s.map((c) => c.label)).toEqual(['Month 3', 'Month 6', 'Month 9', 'Month 12', 'Month 18', 'Month 24', 'Month 36']);
  });

  it('needs a cycle length for cycle offsets', () => {
    // Constructed edge case.
    expect(() => generateSchedule({ startDate: '2026-01-05', offsets: SCHEDULE_TEMPLATES['freeze-thaw-5'].offsets })).toThrow(RangeError);
  });
});
