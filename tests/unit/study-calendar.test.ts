/**
 * The study calendar: one initial test per batch, pulls paired with a same-day control reading.
 * The working practice is common practice with no published source (see DESIGN.md); dates are
 * plain Gregorian arithmetic (2026-11-02 is a Monday, from the calendar).
 */
import { describe, expect, it } from 'vitest';
import type { ConditionKind } from '../../shared/domain';
import { pullGapWarnings, readingCounts, studyCalendar, type CalendarCondition, type ControlPull } from '../../shared/compute/study-calendar';
import { SCHEDULE_TEMPLATES } from '../../shared/compute/schedule';

const w = (n: number) => ({ unit: 'week' as const, n });
const m = (n: number) => ({ unit: 'month' as const, n });
const c = (n: number) => ({ unit: 'cycle' as const, n });

const fridge: CalendarCondition<string> = { key: 'fridge', name: 'Fridge', role: 'control', kind: 'constant', offsets: [w(1), w(4), w(12)] };
const oven: CalendarCondition<string> = { key: 'oven', name: 'Oven', role: 'accelerated', kind: 'constant', offsets: [w(1), w(4), w(6)] };
const room: CalendarCondition<string> = { key: 'room', name: 'Room', role: 'real_time', kind: 'constant', offsets: [m(3), m(6)] };
const ft: CalendarCondition<string> = { key: 'ft', name: 'Freeze-thaw', role: 'stress', kind: 'cycling', offsets: [c(1), c(3)], cycleHours: 48 };

describe('studyCalendar', () => {
  it('puts the initial test on the start date, window that day or the next', () => {
    const cal = studyCalendar('2026-11-02', [fridge, oven]);
    expect(cal.initial).toEqual({ label: 'Initial', dueDate: '2026-11-02', windowBefore: 0, windowAfter: 1 });
    expect(cal.controlKey).toBe('fridge');
  });

  it('pairs every pull with the control reading of its day, adding control readings where the control has none', () => {
    const cal = studyCalendar('2026-11-02', [fridge, oven, room, ft]);
    const control = cal.conditions.find((x) => x.key === 'fridge')!.pulls as ControlPull[];
    expect(control.map((p) => [p.label, p.dueDate, p.added])).toEqual([
      ['Day 2', '2026-11-04', true], // cycle 1 of 48 h
      ['Day 6', '2026-11-08', true], // cycle 3
      ['Week 1', '2026-11-09', false],
      ['Week 4', '2026-11-30', false],
      ['Week 6', '2026-12-14', true],
      ['Week 12', '2027-01-25', false],
      ['Month 3', '2027-02-02', true],
      ['Month 6', '2027-05-02', true],
    ]);
    // One control reading serves every pull due that day.
    expect(control.find((p) => p.label === 'Week 1')!.serves.map((s) => `${s.name} ${s.label}`)).toEqual(['Oven Week 1']);
    for (const x of cal.conditions.filter((y) => y.key !== 'fridge')) {
      for (const p of x.pulls) expect('controlDate' in p && p.controlDate).toBe(p.dueDate);
    }
    expect(cal.warnings.join(' ')).toMatch(/Fridge's own schedule ends at Week 12 \(2027-01-25\), before the pulls it serves \(to Room Month 6, 2027-05-02\): 5 control readings are added/);
  });

  it('a pull on the start date (a centrifuge test) is judged against the initial test', () => {
    const spin: CalendarCondition<string> = { key: 'spin', name: 'Centrifuge', role: 'stress', kind: 'mechanical', offsets: [{ unit: 'day', n: 0 }] };
    const cal = studyCalendar('2026-11-02', [fridge, spin]);
    const p = cal.conditions.find((x) => x.key === 'spin')!.pulls[0];
    expect('controlDate' in p && p.controlDate).toBe('2026-11-02');
    expect(cal.conditions.find((x) => x.key === 'fridge')!.pulls.some((x) => x.dueDate === '2026-11-02')).toBe(false);
  });

  it('warns about pulls left without a control reading: pairing off with its reason, or no control at all', () => {
    const off = studyCalendar('2026-11-02', [fridge, { ...ft, pairControl: false, pairingOffReason: 'compared with each other' }]);
    expect(off.warnings).toContain('Freeze-thaw: Cycle 1, Cycle 3 have no same-day control reading (pairing turned off: compared with each other).');
    const none = studyCalendar('2026-11-02', [oven]);
    expect(none.controlKey).toBeNull();
    expect(none.warnings.join(' ')).toMatch(/No control condition/);
  });

  it('counts the readings, and what one initial test per batch saves against a day 0 in every condition', () => {
    const cal = studyCalendar('2026-11-02', [fridge, oven, room, ft]);
    const kinds = new Map<string, ConditionKind>([['fridge', 'constant'], ['oven', 'constant'], ['room', 'constant'], ['ft', 'cycling']]);
    // 2 batches x 1 sample x 15 attributes = 30 readings a set: the four-condition, two-batch plan asked for 4 x 30 = 120 day-0 readings.
    const r = readingCounts(cal, kinds, 2, 1, 15);
    expect(r.initial).toBe(30);
    expect(r.perConditionDayZero).toBe(120);
    expect(r.saved).toBe(90);
    expect(r.addedControl).toBe(5 * 30);
    expect(r.pulls).toBe((8 + 3 + 2 + 2) * 30);
    expect(r.total).toBe(r.initial + r.pulls);
  });
});

describe('pullGapWarnings (interval: the median gap between pulls, counted from the initial test; common practice, no published source)', () => {
  const d = (n: number) => ({ unit: 'day' as const, n });

  it('says nothing about the built-in schedules, ICH Q1A(R2) 2.2.7 real time (3-, 6-, then 12-monthly) included', () => {
    const all = Object.values(SCHEDULE_TEMPLATES).map((t) => ({ name: t.label, offsets: t.offsets, cycleHours: 48 }));
    expect(pullGapWarnings(all)).toEqual([]);
  });

  it('warns about a pull taken out of the middle: weeks 1, 2, 4 and 12 (gaps 1, 1, 2, 8 weeks; median 1.5)', () => {
    expect(pullGapWarnings([{ name: 'Oven', offsets: [w(1), w(2), w(4), w(12)] }])).toEqual([
      'Oven: no pull between Week 4 and Week 12 (8 weeks), over twice its usual interval (1.5 weeks, the median gap between its pulls). Add a pull in between, or keep the gap on purpose.',
    ]);
  });

  it('warns in months for a monthly calendar that jumps to a year (gaps 1, 1, 1, 9 months)', () => {
    const out = pullGapWarnings([{ name: 'Room', offsets: [m(1), m(2), m(3), m(12)] }]);
    expect(out).toHaveLength(1);
    expect(out[0]).toContain('between Month 3 and Month 12 (9 months)');
    expect(out[0]).toContain('(1 month, the median');
  });

  it('does not warn when the long gaps are the usual interval (days 1, 11, 21, 31: median 10) or there are fewer than three gaps', () => {
    expect(pullGapWarnings([{ name: 'A', offsets: [d(1), d(11), d(21), d(31)] }])).toEqual([]);
    expect(pullGapWarnings([{ name: 'B', offsets: [w(1), w(12)] }])).toEqual([]);
  });

  it('orders the pulls by time whatever order they are listed in, and counts cycles by the cycle length', () => {
    expect(pullGapWarnings([{ name: 'Oven', offsets: [w(12), w(1), w(4), w(2)] }])).toHaveLength(1);
    // Cycles 1, 2, 3, 10 of 48 h: gaps 2, 2, 2, 14 days.
    const ft = pullGapWarnings([{ name: 'Freeze-thaw', offsets: [c(1), c(2), c(3), c(10)], cycleHours: 48 }]);
    expect(ft[0]).toContain('between Cycle 3 and Cycle 10 (7 cycles)');
    expect(ft[0]).toContain('(1 cycle, the median');
  });
});
