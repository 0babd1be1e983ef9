import { describe, expect, it } from 'vitest';
import { addCalendarMonths, labelDating, parseIsoDate, US_NOTE } from '../../shared/compute/label';

// EU Regulation (EC) No 1223/2009, Art. 19(1)(c), as recalled (from memory, not
// copied from the Official Journal): "the date until which the cosmetic product,
// stored under appropriate conditions, will continue to fulfil its initial
// function and, in particular, will remain in conformity with Article 3 ('date of
// minimum durability'). The date itself or details of its location on the
// packaging shall be preceded by the symbol shown in point 3 of Annex VII or the
// words: 'best used before the end of'. ... Indication of the date of minimum
// durability shall not be mandatory for cosmetic products the minimum durability
// of which exceeds 30 months. For such products, there shall be an indication of
// the period of time after opening for which the product is safe and can be used
// without any harm to the consumer. This information shall be indicated, except
// where the concept of durability after opening is not relevant, by the symbol
// shown in point 2 of Annex VII followed by the period (in months and/or years)."

describe('labelDating (EU Regulation 1223/2009, Art. 19(1)(c), from memory)', () => {
  it('30 months: a best-before date is required (30 months or less)', () => {
    const r = labelDating({ shelfLifeMonths: 30, madeDate: '2025-03-15' });
    expect(r.rule).toBe('best_before');
    expect(r.bestBefore).toBe('2027-09-15');
    expect(r.text).toMatch(/Art\. 19\(1\)\(c\)/);
    expect(r.text).toMatch(/best used before the end of 2027-09/);
    expect(r.text).toMatch(/regulatory adviser has the last word/);
    expect(r.usNote).toBe(
      'In the US no expiry date is required for ordinary cosmetics; MoCRA (2022) requires records substantiating safety.',
    );
  });

  it('31 months: no best-before; a period after opening instead (open-jar symbol)', () => {
    const r = labelDating({ shelfLifeMonths: 31, madeDate: '2025-03-15', periodAfterOpeningMonths: 12 });
    expect(r.rule).toBe('period_after_opening');
    expect(r.bestBefore).toBeNull();
    expect(r.periodAfterOpeningMonths).toBe(12);
    expect(r.text).toMatch(/exceeds 30 months/);
    expect(r.text).toMatch(/open-jar symbol with 12M/);
    expect(r.text).toMatch(/Art\. 19\(1\)\(c\)/);
    expect(r.usNote).toBe(US_NOTE);
  });

  it('above 30 months without a PAO set says one is needed', () => {
    const r = labelDating({ shelfLifeMonths: 36, madeDate: '2025-03-15' });
    expect(r.rule).toBe('period_after_opening');
    expect(r.text).toMatch(/none set yet/);
  });

  it('calendar months clamp to the month end (Gregorian calendar)', () => {
    expect(labelDating({ shelfLifeMonths: 1, madeDate: '2024-01-31' }).bestBefore).toBe('2024-02-29'); // leap year
    expect(addCalendarMonths('2025-01-31', 1)).toBe('2025-02-28');
    expect(addCalendarMonths('2024-08-31', 18)).toBe('2026-02-28');
    expect(addCalendarMonths('2023-11-30', 3)).toBe('2024-02-29');
    expect(addCalendarMonths('2024-12-15', 12)).toBe('2025-12-15');
    expect(addCalendarMonths('2024-05-31', 1)).toBe('2024-06-30');
  });

  it('without a made date, states the rule but no date', () => {
    const r = labelDating({ shelfLifeMonths: 12 });
    expect(r.rule).toBe('best_before');
    expect(r.bestBefore).toBeNull();
    expect(r.text).toMatch(/the made date \+ 12 months/);
  });

  it('rejects impossible input with a message', () => {
    expect(labelDating({ shelfLifeMonths: 0, madeDate: '2025-01-01' }).rule).toBeNull();
    expect(labelDating({ shelfLifeMonths: 12.5, madeDate: '2025-01-01' }).text).toMatch(/whole number/);
    expect(labelDating({ shelfLifeMonths: 12, madeDate: '2025-02-30' }).text).toMatch(/real date/);
    expect(labelDating({ shelfLifeMonths: 40, periodAfterOpeningMonths: 0 }).rule).toBeNull();
    expect(parseIsoDate('2025-13-01')).toBeNull();
    expect(addCalendarMonths('2025-01-01', 1.5)).toBeNull();
  });
});
