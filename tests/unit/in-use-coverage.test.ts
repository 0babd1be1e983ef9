/**
 * Months an in-use test (opened daily, room temperature) has run without a failure. Weeks and days
 * become months at 365.25 / 12 = 30.4375 days per month (the mean Gregorian year divided by 12).
 */
import { describe, expect, it } from 'vitest';
import { inUseCoverage, offsetMonths, type InUsePull } from '../../shared/compute/period-after-opening';

const pull = (unit: InUsePull['unit'], n: number, verdicts: string[]): InUsePull => ({ unit, n, verdicts });

describe('inUseCoverage (30.4375 days per month, Gregorian year / 12)', () => {
  it('converts weeks and days, and leaves cycles out', () => {
    expect(offsetMonths('week', 4)).toBeCloseTo(28 / 30.4375, 10);
    expect(offsetMonths('day', 90)).toBeCloseTo(90 / 30.4375, 10);
    expect(offsetMonths('month', 6)).toBe(6);
    expect(offsetMonths('cycle', 3)).toBeNull();
  });
  it('no in-use data: no months', () => {
    expect(inUseCoverage([]).months).toBeNull();
  });
  it('all pulls pass: up to the last pull', () => {
    const c = inUseCoverage([pull('month', 3, ['pass']), pull('month', 6, ['pass', 'no_criterion']), pull('month', 12, ['pass'])]);
    expect(c.months).toBe(12);
    expect(c.reason).toMatch(/No failure at any pull, up to month 12/);
  });
  it('a fail at week 8 stops it at week 4 (28 / 30.4375 = 0.92, shown 0.9)', () => {
    const c = inUseCoverage([pull('week', 4, ['pass']), pull('week', 8, ['pass', 'fail']), pull('week', 12, ['pass'])]);
    expect(c.months).toBe(0.9);
    expect(c.reason).toMatch(/failure at week 8: covered up to week 4/);
  });
  it('a fail at the first pull: no months', () => {
    expect(inUseCoverage([pull('week', 4, ['fail'])]).months).toBeNull();
  });
  it('a pull with no result yet stops it at the pull before, even if a later one passed', () => {
    const c = inUseCoverage([pull('month', 1, ['pass']), pull('month', 3, []), pull('month', 6, ['pass'])]);
    expect(c.months).toBe(1);
    expect(c.reason).toMatch(/month 3 not recorded yet/);
    expect(inUseCoverage([pull('month', 1, ['not_done'])]).months).toBeNull();
  });
  it('day 0 and pulls given out of order', () => {
    expect(inUseCoverage([pull('month', 6, ['pass']), pull('day', 0, ['pass']), pull('month', 3, ['pass'])]).months).toBe(6);
  });
});
