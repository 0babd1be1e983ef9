/**
 * The study calendar: one initial test per batch, pulls paired with a same-day control reading.
 * The working practice is common practice with no published source (see DESIGN.md); dates are
 * plain Gregorian arithmetic (2026-11-02 is a Monday, from the calendar).
 */
import { describe, expect, it } from 'vitest';
import type { ConditionKind } from '../../shared/domain';
import { readingCounts, studyCalendar, type CalendarCondition, type ControlPull } from '../../shared/compute/study-calendar';

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
