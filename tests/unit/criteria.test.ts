import { describe, expect, it } from 'vitest';
import {
  CRITERION_KINDS_BY_ATTRIBUTE,
  DEFAULT_CRITERIA,
  criterionError,
  defaultCriterion,
  evaluate,
  physicalRangeError,
  type Criterion,
} from '../../shared/compute/criteria';

// The acceptance limits used below (pH ±0.5 of initial, viscosity ±20 %, ΔE00 about 2, odor/color
// "slight" at worst versus control) are common practice, no published source (DESIGN.md). The boundary
// rule (limits inclusive, 1e-9 float slack) is this project's choice.

describe('default criteria (common practice, no published source)', () => {
  it('match DESIGN.md', () => {
    expect(DEFAULT_CRITERIA.ph).toEqual({ kind: 'change_abs', max: 0.5 });
    expect(DEFAULT_CRITERIA.viscosity).toEqual({ kind: 'change_pct', max: 20 });
    expect(DEFAULT_CRITERIA.delta_e00).toEqual({ kind: 'range', max: 2 });
    for (const code of ['odor', 'color', 'appearance', 'texture']) {
      expect(DEFAULT_CRITERIA[code]).toEqual({ kind: 'worst_compared', level: 'slight' });
    }
    expect(DEFAULT_CRITERIA.separation).toEqual({ kind: 'worst_grade', grade: 1 });
  });

  it('are found by loose codes and fall back to none', () => {
    expect(defaultCriterion('pH')).toEqual({ kind: 'change_abs', max: 0.5 });
    expect(defaultCriterion('Odour')).toEqual({ kind: 'worst_compared', level: 'slight' });
    expect(defaultCriterion('ΔE00')).toEqual({ kind: 'none' });
    expect(defaultCriterion('delta-e00')).toEqual({ kind: 'range', max: 2 });
    expect(defaultCriterion('pack_intact')).toEqual({ kind: 'none' });
    expect(defaultCriterion('constructor')).toEqual({ kind: 'none' });
  });

  it('the default objects cannot be changed through a returned copy', () => {
    const c = defaultCriterion('ph') as { kind: 'change_abs'; max: number };
    c.max = 9;
    expect(DEFAULT_CRITERIA.ph).toEqual({ kind: 'change_abs', max: 0.5 });
  });
});

describe('change_abs (pH ±0.5 of initial, common practice)', () => {
  const ph: Criterion = { kind: 'change_abs', max: 0.5 };
  it('passes on the boundary and fails just past it', () => {
    expect(evaluate(ph, 5.8, 5.3, { name: 'pH' })).toEqual({ verdict: 'pass', message: 'pH 5.8 is 0.5 from day-0 5.3; allowed ±0.5' });
    expect(evaluate(ph, 4.8, 5.3, { name: 'pH' }).verdict).toBe('pass');
    expect(evaluate(ph, 5.9, 5.3, { name: 'pH' })).toEqual({ verdict: 'fail', message: 'pH 5.9 is 0.6 from day-0 5.3; allowed ±0.5' });
    expect(evaluate(ph, 5.81, 5.3, { name: 'pH' }).verdict).toBe('fail');
  });

  it('absorbs binary float noise at the limit', () => {
    // Constructed edge case: 4.03 - 3.53 = 0.5000000000000004 in IEEE 754 binary64.
    expect(4.03 - 3.53).toBeGreaterThan(0.5);
    expect(evaluate(ph, 4.03, 3.53, { name: 'pH' }).verdict).toBe('pass');
    expect(evaluate(ph, 4.03, 3.53, { name: 'pH' }).message).toBe('pH 4.03 is 0.5 from day-0 3.53; allowed ±0.5');
  });

  it('needs a day-0 value', () => {
    const e = evaluate(ph, 5.8, undefined, { name: 'pH' });
    expect(e.verdict).toBe('needs_baseline');
    expect(e.message).toMatch(/No day-0 value for pH/);
    expect(evaluate(ph, 5.8, null).verdict).toBe('needs_baseline');
  });
});

describe('change_pct (viscosity ±20 %, common practice)', () => {
  const visc: Criterion = { kind: 'change_pct', max: 20 };
  const subject = { name: 'Viscosity', unit: 'mPa·s' };
  it('passes on the boundary in either direction and fails past it', () => {
    expect(evaluate(visc, 12000, 10000, subject)).toEqual({
      verdict: 'pass',
      message: 'Viscosity 12000 mPa·s is 20 % from day-0 10000 mPa·s; allowed ±20 %',
    });
    expect(evaluate(visc, 8000, 10000, subject).verdict).toBe('pass');
    expect(evaluate(visc, 12001, 10000, subject).verdict).toBe('fail');
    expect(evaluate(visc, 7999, 10000, subject)).toEqual({
      verdict: 'fail',
      message: 'Viscosity 7999 mPa·s is 20.01 % from day-0 10000 mPa·s; allowed ±20 %',
    });
    // A failing change never reads as equal to the limit (constructed edge case).
    expect(evaluate(visc, 12000.1, 10000, subject).message).toBe(
      'Viscosity 12000.1 mPa·s is more than 20 % from day-0 10000 mPa·s; allowed ±20 %',
    );
    expect(evaluate({ kind: 'change_abs', max: 0.5 }, 5.80001, 5.3, { name: 'pH' })).toEqual({
      verdict: 'fail',
      message: 'pH 5.80001 is more than 0.5 from day-0 5.3; allowed ±0.5',
    });
    expect(evaluate(visc, 12500, 10000, subject).message).toBe(
      'Viscosity 12500 mPa·s is 25 % from day-0 10000 mPa·s; allowed ±20 %',
    );
  });

  it('absorbs float noise: 0.84 vs 0.7 Pa·s is exactly 20 %', () => {
    // Constructed edge case: |0.84 - 0.7| / 0.7 x 100 = 20.000000000000004 in binary64.
    expect((Math.abs(0.84 - 0.7) / 0.7) * 100).toBeGreaterThan(20);
    expect(evaluate(visc, 0.84, 0.7).verdict).toBe('pass');
  });

  it('explains a day-0 value of 0 instead of returning NaN', () => {
    // Constructed edge case: a percent change from 0 is undefined.
    const e = evaluate(visc, 5, 0, subject);
    expect(e.verdict).toBe('needs_baseline');
    expect(e.message).toBe(
      'The day-0 value of Viscosity is 0, so a percent change is undefined; use an absolute change or a range instead',
    );
    expect(e.message).not.toMatch(/NaN|Infinity/);
  });
});

describe('range (ΔE00 at most 2, common practice)', () => {
  it('passes on the maximum and fails above', () => {
    const de: Criterion = { kind: 'range', max: 2 };
    expect(evaluate(de, 2, undefined, { name: 'ΔE00' })).toEqual({ verdict: 'pass', message: 'ΔE00 2 is at or below the maximum 2' });
    // Sharma, Wu & Dalal 2005, Table 1, pair 1: ΔE00 = 2.0425 -> above 2.
    expect(evaluate(de, 2.0425, undefined, { name: 'ΔE00' })).toEqual({ verdict: 'fail', message: 'ΔE00 2.0425 is above the maximum 2' });
  });

  it('checks both ends of a two-sided range', () => {
    // Constructed edge case: a pH specification of 4.5-6.5.
    const r: Criterion = { kind: 'range', min: 4.5, max: 6.5 };
    expect(evaluate(r, 4.5, undefined, { name: 'pH' })).toEqual({ verdict: 'pass', message: 'pH 4.5 is within 4.5–6.5' });
    expect(evaluate(r, 6.5, undefined, { name: 'pH' }).verdict).toBe('pass');
    expect(evaluate(r, 4.49, undefined, { name: 'pH' })).toEqual({ verdict: 'fail', message: 'pH 4.49 is below the minimum 4.5' });
    expect(evaluate(r, 6.51, undefined, { name: 'pH' }).verdict).toBe('fail');
    // 0.1 + 0.2 = 0.30000000000000004 still meets a maximum of 0.3.
    expect(evaluate({ kind: 'range', max: 0.3 }, 0.1 + 0.2).verdict).toBe('pass');
    expect(evaluate({ kind: 'range', min: 10 }, 9.5, undefined, { name: 'Mass', unit: 'g' }).message).toBe(
      'Mass 9.5 g is below the minimum 10 g',
    );
  });
});

describe('worst_grade (separation at worst grade 1, common practice)', () => {
  const sep: Criterion = { kind: 'worst_grade', grade: 1 };
  // DESIGN.md's separation scale (our own labels).
  const gradeLabels = ['none', 'faint oil sheen', 'oil droplets on surface', 'visible layer', 'fully split'];
  it('passes at the worst allowed grade and fails one worse', () => {
    expect(evaluate(sep, 0, undefined, { name: 'Separation', gradeLabels }).verdict).toBe('pass');
    expect(evaluate(sep, 1, undefined, { name: 'Separation', gradeLabels })).toEqual({
      verdict: 'pass',
      message: 'Separation grade 1 (faint oil sheen); worst allowed 1 (faint oil sheen)',
    });
    expect(evaluate(sep, 2, undefined, { name: 'Separation', gradeLabels })).toEqual({
      verdict: 'fail',
      message: 'Separation grade 2 (oil droplets on surface) is worse than the worst allowed 1 (faint oil sheen)',
    });
  });

  it('rejects grades that are not whole numbers', () => {
    // Constructed edge cases.
    expect(() => evaluate(sep, 1.5)).toThrow(TypeError);
    expect(() => evaluate(sep, -1)).toThrow(TypeError);
  });
});

describe('worst_compared (odor "slight" at worst versus control, common practice)', () => {
  const odor: Criterion = { kind: 'worst_compared', level: 'slight' };
  it('passes at slight and fails at marked', () => {
    expect(evaluate(odor, 'no_change', undefined, { name: 'Odor' }).verdict).toBe('pass');
    expect(evaluate(odor, 'slight', undefined, { name: 'Odor' })).toEqual({
      verdict: 'pass',
      message: 'Odor: slight versus control; worst allowed slight',
    });
    expect(evaluate(odor, 'marked', undefined, { name: 'Odor' })).toEqual({
      verdict: 'fail',
      message: 'Odor: marked versus control is worse than the worst allowed slight',
    });
    expect(evaluate(odor, 'severe').verdict).toBe('fail');
    expect(evaluate({ kind: 'worst_compared', level: 'no_change' }, 'slight').verdict).toBe('fail');
  });

  it('rejects unknown levels', () => {
    // Constructed edge case.
    expect(() => evaluate(odor, 'awful')).toThrow(TypeError);
  });
});

describe('must_pass and none', () => {
  it('must_pass passes on true and fails on false', () => {
    // DESIGN.md examples "pack intact", "pump dispenses".
    expect(evaluate({ kind: 'must_pass' }, true, undefined, { name: 'Pack intact' })).toEqual({ verdict: 'pass', message: 'Pack intact: passed' });
    expect(evaluate({ kind: 'must_pass' }, false, undefined, { name: 'Pump dispenses' })).toEqual({
      verdict: 'fail',
      message: 'Pump dispenses: failed; must pass',
    });
    expect(() => evaluate({ kind: 'must_pass' }, 'yes')).toThrow(TypeError);
  });

  it('none never judges, whatever the value (notes included)', () => {
    expect(evaluate({ kind: 'none' }, 'slight creaming near the lid', undefined, { name: 'Notes' })).toEqual({
      verdict: 'no_criterion',
      message: 'No acceptance criterion set for Notes',
    });
    expect(evaluate({ kind: 'none' }, 7).verdict).toBe('no_criterion');
    expect(CRITERION_KINDS_BY_ATTRIBUTE.note).toEqual(['none']);
  });
});

describe('type and criterion errors', () => {
  it('refuses a value of the wrong type', () => {
    // Constructed edge cases.
    expect(() => evaluate({ kind: 'range', max: 2 }, 'two')).toThrow(TypeError);
    expect(() => evaluate({ kind: 'range', max: 2 }, Number.NaN)).toThrow(TypeError);
    expect(() => evaluate({ kind: 'change_abs', max: 0.5 }, true, 5)).toThrow(TypeError);
  });

  it('reports unusable criteria', () => {
    // Constructed edge cases.
    expect(criterionError({ kind: 'range' })).toMatch(/needs a minimum/);
    expect(criterionError({ kind: 'range', min: 7, max: 4 })).toBe('The minimum 7 is above the maximum 4');
    expect(criterionError({ kind: 'change_pct', max: -1 })).toMatch(/at least 0/);
    expect(criterionError({ kind: 'worst_grade', grade: 0.5 })).toMatch(/whole number/);
    expect(criterionError({ kind: 'worst_compared', level: 'bad' as never })).toMatch(/Unknown/);
    expect(criterionError({ kind: 'range', min: 4.5, max: 6.5 })).toBeNull();
    expect(() => evaluate({ kind: 'range', min: 7, max: 4 }, 5)).toThrow(RangeError);
  });
});

describe('physicalRangeError', () => {
  it('flags impossible values', () => {
    // pH scale of aqueous solutions 0-14 (common practice; strong acids can go below 0, but not cosmetics);
    // water activity is a ratio of vapour pressures, 0-1 (definition); CIE L* runs 0-100 (CIE 15:2004, from memory);
    // viscosity and mass cannot be negative.
    expect(physicalRangeError('pH', 14.2)).toBe('pH must be between 0 and 14 (got 14.2)');
    expect(physicalRangeError('ph', -0.1)).toBe('pH must be between 0 and 14 (got -0.1)');
    expect(physicalRangeError('pH', 0)).toBeNull();
    expect(physicalRangeError('pH', 14)).toBeNull();
    expect(physicalRangeError('viscosity', -5)).toBe('Viscosity cannot be negative (got -5)');
    expect(physicalRangeError('viscosity', 0)).toBeNull();
    expect(physicalRangeError('mass', -0.01)).toBe('Mass cannot be negative (got -0.01)');
    expect(physicalRangeError('water_activity', 1.02)).toBe('Water activity must be between 0 and 1 (got 1.02)');
    expect(physicalRangeError('aw', 0.6)).toBeNull();
    expect(physicalRangeError('L*', 100.5)).toBe('L* must be between 0 and 100 (got 100.5)');
    expect(physicalRangeError('l_star', -1)).toBe('L* must be between 0 and 100 (got -1)');
    expect(physicalRangeError('pH', Number.NaN)).toBe('pH must be a number');
  });

  it('leaves other attributes alone', () => {
    // a* and b* are unbounded in principle; unknown codes are not checked (constructed edge cases).
    expect(physicalRangeError('a_star', -150)).toBeNull();
    expect(physicalRangeError('odor', 3)).toBeNull();
  });
});
