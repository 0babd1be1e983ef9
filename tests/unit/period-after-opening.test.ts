/**
 * Suggested period after opening. The months per risk outcome and pack are common practice, no
 * published source; the step values (6, 12, 18, 24 months) are those usually printed beside the
 * open-jar symbol (EU Regulation 1223/2009, Annex VII, point 2).
 */
import { describe, expect, it } from 'vitest';
import { stepAtOrBelow, suggestPao } from '../../shared/compute/period-after-opening';
import { labelDating } from '../../shared/compute/label';

describe('suggestPao (common practice, no published source)', () => {
  it('not low risk in an open jar, no in-use data: 6 months', () => {
    const s = suggestPao({ lowRisk: false, pack: 'open_jar', inUseMonths: null, shelfLifeMonths: 24 });
    expect(s.months).toBe(6);
    expect(s.basis).toMatch(/no published source/);
  });
  it('low risk in an airless pump: 24 months only with in-use data, else capped at 12', () => {
    expect(suggestPao({ lowRisk: true, pack: 'airless_pump', inUseMonths: null, shelfLifeMonths: 36 }).months).toBe(12);
    expect(suggestPao({ lowRisk: true, pack: 'airless_pump', inUseMonths: 24, shelfLifeMonths: 36 }).months).toBe(24);
  });
  it('in-use data shortens: 13 months covered means 12', () => {
    const s = suggestPao({ lowRisk: true, pack: 'narrow_orifice', inUseMonths: 13, shelfLifeMonths: 36 });
    expect(s.months).toBe(12);
    expect(s.reasons.join(' ')).toMatch(/In-use test covered 13 months/);
  });
  it('never longer than the shelf life', () => {
    expect(suggestPao({ lowRisk: true, pack: 'airless_pump', inUseMonths: 24, shelfLifeMonths: 18 }).months).toBe(18);
  });
  it('single use: not relevant', () => {
    expect(suggestPao({ lowRisk: false, pack: 'single_use', inUseMonths: null, shelfLifeMonths: 12 }).months).toBeNull();
  });
  it('steps', () => {
    expect([stepAtOrBelow(5), stepAtOrBelow(6), stepAtOrBelow(17), stepAtOrBelow(30)]).toEqual([null, 6, 12, 24]);
  });
  it('the label rule (EU 1223/2009 Art. 19(1)(c)) shows the suggested period above 30 months', () => {
    const pao = suggestPao({ lowRisk: true, pack: 'narrow_orifice', inUseMonths: 18, shelfLifeMonths: 36 }).months;
    const ld = labelDating({ shelfLifeMonths: 36, periodAfterOpeningMonths: pao });
    expect(ld.rule).toBe('period_after_opening');
    expect(ld.text).toMatch(/18M/);
  });
});
