import { describe, expect, it } from 'vitest';
import { arrheniusFit, GAS_CONSTANT, projectWithQ10 } from '../../shared/compute/q10';
import { weeksToMonths } from '../../shared/compute/suggest';

describe('projectWithQ10', () => {
  it('12 weeks at 45 °C with Q10 = 2 supports 48 weeks at 25 °C (common practice, no published source)', () => {
    const weeks = projectWithQ10({ months: 12, tAccC: 45, tStoreC: 25, q10: 2 });
    expect(weeks.months).toBeCloseTo(48, 12);
    expect(weeks.factor).toBeCloseTo(4, 12);
    expect(weeks.message).toMatch(/rule of thumb, not a prediction/);
    // The same in months (convention: 1 week = 7 days, 1 month = 365.25/12 = 30.4375 days).
    const months = projectWithQ10({ months: weeksToMonths(12), tAccC: 45, tStoreC: 25, q10: 2 });
    expect(months.months).toBeCloseTo((48 * 7) / 30.4375, 12);
    expect(months.months).toBeCloseTo(11.039, 3);
  });

  it('Q10 = 3 over 20 °C is a factor 9 (arithmetic)', () => {
    expect(projectWithQ10({ months: 1, tAccC: 45, tStoreC: 25, q10: 3 }).months).toBeCloseTo(9, 12);
  });

  it('rejects Q10 ≤ 0 or not finite with a message', () => {
    for (const q10 of [0, -2, Number.NaN, Number.POSITIVE_INFINITY]) {
      const r = projectWithQ10({ months: 3, tAccC: 45, tStoreC: 25, q10 });
      expect(r.months).toBeNull();
      expect(r.factor).toBeNull();
      expect(r.message).toMatch(/Q10 must be a positive number/);
    }
    expect(projectWithQ10({ months: -1, tAccC: 45, tStoreC: 25, q10: 2 }).months).toBeNull();
    expect(projectWithQ10({ months: 1, tAccC: Number.NaN, tStoreC: 25, q10: 2 }).months).toBeNull();
    expect(projectWithQ10({ months: 1, tAccC: 1e6, tStoreC: 25, q10: 2 }).months).toBeNull();
  });
});

describe('arrheniusFit', () => {
  // Constructed from ΔH/R = 10 000 K, the value in the mean kinetic temperature
  // definition (Haynes 1971; ΔH = 83.144 kJ/mol): k = A·exp(-10000/T).
  const eaOverR = 10000;
  const temps = [25, 30, 40, 50];
  const rates = temps.map((c) => ({ tempC: c, k: 5e12 * Math.exp(-eaOverR / (c + 273.15)) }));

  it('recovers Ea = 83.144 kJ/mol exactly from the constructed set', () => {
    const r = arrheniusFit(rates);
    expect(r.eaOverR).toBeCloseTo(10000, 6);
    expect(r.eaKJPerMol).toBeCloseTo((10000 * GAS_CONSTANT) / 1000, 8);
    expect(r.eaKJPerMol).toBeCloseTo(83.144, 2);
    expect(r.rSquared).toBeCloseTo(1, 12);
    expect(r.lnA).toBeCloseTo(Math.log(5e12), 6);
    expect(r.temperatures).toBe(4);
  });

  it('implies Q10 between 25 and 35 °C of exp(10000·(1/298.15 - 1/308.15)) ≈ 2.97 (Arrhenius equation)', () => {
    const r = arrheniusFit(rates, { fromC: 25, toC: 35 });
    const expected = Math.exp(10000 * (1 / 298.15 - 1 / 308.15));
    expect(r.q10).toBeCloseTo(expected, 8);
    expect(r.q10).toBeCloseTo(2.97, 2);
    expect(r.message).toMatch(/Ea = 83\.1 kJ\/mol/);
  });

  it('asks for 3 or more different temperatures (duplicates count once)', () => {
    const two = arrheniusFit([{ tempC: 25, k: 1 }, { tempC: 40, k: 2 }]);
    expect(two.eaKJPerMol).toBeNull();
    expect(two.message).toMatch(/3 or more different temperatures; have 2/);
    const dup = arrheniusFit([{ tempC: 25, k: 1 }, { tempC: 25, k: 1.1 }, { tempC: 40, k: 2 }, { tempC: 40, k: 2.1 }]);
    expect(dup.eaKJPerMol).toBeNull();
    expect(dup.message).toMatch(/have 2 \(4 rates, but repeated temperatures count once\)/);
  });

  it('rejects zero or negative rates with a message', () => {
    const r = arrheniusFit([{ tempC: 25, k: 0 }, { tempC: 40, k: 2 }, { tempC: 50, k: -1 }]);
    expect(r.eaKJPerMol).toBeNull();
    expect(r.q10).toBeNull();
    expect(r.message).toMatch(/2 are zero or negative \(at 25 °C, 50 °C\)/);
  });

  it('accepts replicate rates at a temperature when 3 temperatures remain', () => {
    const reps = [...rates, { ...rates[0] }];
    expect(arrheniusFit(reps).eaOverR).toBeCloseTo(10000, 6);
  });
});
