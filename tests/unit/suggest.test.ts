import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import {
  DAYS_PER_MONTH,
  daysToMonths,
  suggestShelfLife,
  SUGGEST_CAUTION,
  weeksToMonths,
  type SuggestCondition,
  type SuggestObservation,
} from '../../shared/compute/suggest';

const here = path.dirname(fileURLToPath(import.meta.url));
// Reference data live in the repo's sibling folder shared/ (also in CI).
const refDir = path.resolve(here, '../fixtures/reference');

/** LeBlond, Griffith & Aubuchon 2011, J Valid Technol 17(3): potency of 3 batches, limit 95.0. */
function leblondObservations(): SuggestObservation[] {
  return fs
    .readFileSync(path.join(refDir, 'leblond-2011-pooled-potency.csv'), 'utf8')
    .split(/\r?\n/)
    .filter((l) => l.trim() !== '' && !l.startsWith('#'))
    .slice(1)
    .map((l) => {
      const [batch, month, potency] = l.split(',');
      const value = Number(potency);
      return { batch, months: Number(month), value, passed: value >= 95 };
    });
}

function allFinite(v: unknown): boolean {
  if (typeof v === 'number') return Number.isFinite(v);
  if (Array.isArray(v)) return v.every(allFinite);
  if (v && typeof v === 'object') return Object.values(v).every(allFinite);
  return true;
}

const WEEKS = [0, 1, 2, 4, 8, 12];

/** A 45 °C accelerated condition with pH and separation judged at each week. */
function oven45(failSeparationFromWeek: number | null = null): SuggestCondition {
  return {
    name: '45 °C oven',
    kind: 'constant',
    role: 'accelerated',
    setpointC: 45,
    attributes: [
      {
        name: 'pH',
        kind: 'measured',
        limit: { lower: 5.0, upper: 6.0 },
        observations: WEEKS.map((w) => ({ months: weeksToMonths(w), value: 5.5 - 0.01 * w, passed: true })),
      },
      {
        name: 'separation',
        kind: 'graded',
        observations: WEEKS.map((w) => ({
          months: weeksToMonths(w),
          passed: failSeparationFromWeek === null || w < failSeparationFromWeek,
        })),
      },
    ],
  };
}

const freezeThaw = (fail: boolean): SuggestCondition => ({
  name: 'Freeze-thaw (-10 °C / 25 °C, 5 cycles)',
  kind: 'cycling',
  role: 'stress',
  lowC: -10,
  attributes: [
    { name: 'separation', kind: 'graded', observations: [1, 2, 3, 4, 5].map((c) => ({ months: 0, passed: !(fail && c >= 3) })) },
  ],
});

describe('month conventions', () => {
  it('1 month = 365.25/12 = 30.4375 days; 1 week = 7 days (convention stated in suggest.ts)', () => {
    expect(DAYS_PER_MONTH).toBe(30.4375);
    expect(daysToMonths(30.4375)).toBe(1);
    expect(weeksToMonths(48)).toBeCloseTo(336 / 30.4375, 12);
  });
});

describe('projection only: 12 weeks at 45 °C passed, Q10 = 2', () => {
  // Common practice, no published source: 12 weeks at 45 °C with Q10 = 2 ≈ 48 weeks
  // at 25 °C = 48 × 7 / 30.4375 = 11.04 months -> 11 whole months.
  const r = suggestShelfLife({
    storage: 'room',
    storageTempC: 25,
    q10: 2,
    madeDate: '2025-06-01',
    conditions: [oven45(), freezeThaw(true)],
  });

  it('suggests 11 months from the projection, with a note to verify', () => {
    expect(r.months).toBe(11);
    expect(r.basis).toBe('projection_only');
    expect(r.confidenceNote).toMatch(/verify with real-time data/);
    const q = r.reasons.find((x) => x.method === 'q10')!;
    expect(q.figureMonths).toBeCloseTo((48 * 7) / 30.4375, 10);
    expect(q.figureMonths).toBeCloseTo(11.04, 2);
    expect(q.attribute).toBe('all attributes');
    expect(q.condition).toBe('45 °C oven');
    expect(q.dataPoints).toBe(12);
    expect(q.rule).toMatch(/common practice, no published source/);
    expect(r.governingReason).toBe(r.reasons.indexOf(q));
  });

  it('a freeze-thaw failure is a gate: a storage instruction, not a figure', () => {
    expect(r.gates).toHaveLength(1);
    expect(r.gates[0].outcome).toBe('storage_instruction');
    expect(r.gates[0].instruction).toBe('Protect from freezing.');
    expect(r.gates[0].attributes).toEqual(['separation']);
    expect(r.storageInstructions).toEqual(['Protect from freezing.']);
    expect(r.blocked).toBe(false);
    const g = r.reasons.find((x) => x.method === 'gate')!;
    expect(g.figureMonths).toBeNull();
  });

  it('label dating for 11 months (30 or less -> best before, EU 1223/2009 Art. 19(1)(c)) and the caution', () => {
    expect(r.labelDating?.rule).toBe('best_before');
    expect(r.labelDating?.bestBefore).toBe('2026-05-01');
    expect(r.caution).toBe(SUGGEST_CAUTION);
    expect(r.caution).toMatch(/ISO 11930/);
    expect(allFinite(r)).toBe(true);
  });
});

describe('accelerated failure and gates that block', () => {
  it('uses the last checkpoint that still passed: failure at week 8 -> 4 weeks × 4 = 16 weeks -> 3 months', () => {
    const r = suggestShelfLife({ storage: 'room', storageTempC: 25, conditions: [oven45(8)] });
    const q = r.reasons.find((x) => x.method === 'q10')!;
    expect(q.attribute).toBe('separation');
    expect(q.figureMonths).toBeCloseTo(weeksToMonths(16), 10); // 3.68 months
    expect(r.months).toBe(3);
    expect(q.message).toMatch(/last passing checkpoint/);
    expect(q.afterFailure).toBe(true);
  });

  it('a centrifuge failure blocks release', () => {
    const centrifuge: SuggestCondition = {
      name: 'Centrifuge 3000 rpm 30 min',
      kind: 'mechanical',
      role: 'stress',
      attributes: [{ name: 'separation', kind: 'graded', observations: [{ months: 0, passed: false }] }],
    };
    const r = suggestShelfLife({ storageTempC: 25, conditions: [oven45(), centrifuge] });
    expect(r.blocked).toBe(true);
    expect(r.gates[0].outcome).toBe('block');
    expect(r.confidenceNote).toMatch(/blocks release/);
    expect(r.months).toBe(11);
  });

  it('a control is the reference, not a stress test: its failure is a note, never a figure or a block', () => {
    const fridge: SuggestCondition = {
      name: '4 °C control',
      kind: 'constant',
      role: 'control',
      setpointC: 4,
      attributes: [{ name: 'odor', kind: 'compared', observations: [{ months: 0, passed: true }, { months: 1, passed: false }] }],
    };
    const r = suggestShelfLife({ storageTempC: 25, conditions: [oven45(), fridge] });
    expect(r.months).toBe(11); // the 45 °C projection alone, as without the control
    expect(r.blocked).toBe(false);
    expect(r.gates).toEqual([expect.objectContaining({ condition: '4 °C control', outcome: 'note', instruction: null })]);
    const line = r.reasons.find((x) => x.condition === '4 °C control')!;
    expect(line).toMatchObject({ method: 'gate', gateOf: 'control', figureMonths: null });
    expect(line.rule).toMatch(/^Control: the reference/);
    expect(r.reasons.find((x) => x.condition === '45 °C oven' && x.method === 'gate')).toBeUndefined();
  });

  it('only day-0 results at 45 °C give no projection yet (not a figure of 0)', () => {
    const dayZero: SuggestCondition = {
      ...oven45(),
      attributes: oven45().attributes.map((a) => ({ ...a, observations: a.observations.filter((o) => o.months === 0) })),
    };
    const r = suggestShelfLife({ storageTempC: 25, conditions: [dayZero] });
    expect(r.months).toBeNull();
    expect(r.reasons[0].figureMonths).toBeNull();
    expect(r.reasons[0].message).toMatch(/Only day-0 results/);
  });

  it('a failure at the first checkpoint after day 0 gives a figure of 0 months', () => {
    const r = suggestShelfLife({ storageTempC: 25, conditions: [oven45(1)] });
    expect(r.months).toBe(0);
    expect(r.labelDating).toBeNull();
  });

  it('no results: no figure, no NaN', () => {
    const r = suggestShelfLife({ conditions: [] });
    expect(r.months).toBeNull();
    expect(r.basis).toBe('none');
    expect(r.labelDating).toBeNull();
    expect(allFinite(r)).toBe(true);
  });
});

describe('regression branch: LeBlond 2011 potency at real time (data span 0-24 months, so X = 24)', () => {
  const realTime = (observations: SuggestObservation[]): SuggestCondition => ({
    name: '25 °C / 60 % RH',
    kind: 'constant',
    role: 'real_time',
    setpointC: 25,
    attributes: [{ name: 'potency', kind: 'measured', limit: { lower: 95.0, decimals: 1 }, observations }],
  });
  const obs = leblondObservations();

  it('pooled regression meets 95.0 at 25.9958 months, under the 2X / X + 12 cap of 36 -> 25 months', () => {
    expect(Math.max(...obs.map((o) => o.months))).toBe(24);
    const r = suggestShelfLife({ storage: 'room', conditions: [realTime(obs)], madeDate: '2025-01-10' });
    const reg = r.reasons.find((x) => x.method === 'regression')!;
    // 25.9958: LeBlond et al. 2011 as recomputed in the reference CSV header (paper: 26 months).
    expect(Math.abs((reg.figureMonths as number) - 25.9958)).toBeLessThan(0.00005);
    expect(reg.dataPoints).toBe(31);
    expect(reg.capped).toBe(false); // under the cap: the trend's own figure
    expect(reg.rule).toMatch(/pooled line/);
    expect(r.months).toBe(25);
    expect(r.basis).toBe('real_time');
    expect(r.labelDating?.rule).toBe('best_before');
    expect(r.labelDating?.bestBefore).toBe('2027-02-10');
  });

  it("with limitRounding 'to_limit_decimals' the figure is 26.2241 -> 26 months", () => {
    const r = suggestShelfLife({ conditions: [realTime(obs)], shelfLife: { limitRounding: 'to_limit_decimals' } });
    const reg = r.reasons.find((x) => x.method === 'regression')!;
    expect(Math.abs((reg.figureMonths as number) - 26.2241)).toBeLessThan(0.00005);
    expect(r.months).toBe(26);
  });

  it('capped by the extrapolation rule: 12 months of data and significant change at accelerated -> X + 3 = 15', () => {
    const first12 = obs.filter((o) => o.months <= 12);
    const r = suggestShelfLife({ conditions: [realTime(first12)], acceleratedSignificantChange: true });
    const reg = r.reasons.find((x) => x.method === 'regression')!;
    expect(reg.figureMonths).toBe(15);
    expect(reg.rule).toMatch(/Capped: ICH Q1E: significant change at accelerated/);
    expect(reg.capped).toBe(true);
    expect(r.months).toBe(15);
  });

  it('the smallest figure governs: a passing 12-week 45 °C projection (11.04 months) is shorter', () => {
    const r = suggestShelfLife({ storage: 'room', q10: 2, conditions: [realTime(obs), oven45()] });
    expect(r.months).toBe(11);
    expect(r.basis).toBe('real_time');
    expect(r.confidenceNote).toMatch(/accelerated projection gives the shortest figure/);
    expect(r.reasons.map((x) => x.method).sort()).toEqual(['q10', 'regression']);
  });

  it('a real-time failure caps the figure at the last checkpoint that passed', () => {
    const graded: SuggestCondition = {
      ...realTime(obs),
      attributes: [
        ...realTime(obs).attributes,
        { name: 'odor vs control', kind: 'compared', observations: [0, 3, 6, 9, 12].map((m) => ({ months: m, passed: m < 9 })) },
      ],
    };
    const r = suggestShelfLife({ conditions: [graded] });
    const o = r.reasons.find((x) => x.method === 'observed')!;
    expect(o.figureMonths).toBe(6);
    expect(r.months).toBe(6);
  });

  it('a new lot with only its initial reading is left out with a note, and the figure stands (LeBlond data plus a lot at t = 0)', () => {
    const withNewLot = [...obs, { months: 0, batch: 'new-lot', value: 101.2, passed: true }];
    const before = suggestShelfLife({ storage: 'room', conditions: [realTime(obs)] });
    const r = suggestShelfLife({ storage: 'room', conditions: [realTime(withNewLot)] });
    const reg = r.reasons.find((x) => x.method === 'regression')!;
    expect(reg.figureMonths).toBeCloseTo(before.reasons.find((x) => x.method === 'regression')!.figureMonths as number, 9);
    expect(r.months).toBe(before.months);
    expect(reg.message).toMatch(/Left out: batch new-lot \(results at one time only \(0 months\)/);
  });

  it('too little real-time data gives a reason with a message, not a figure', () => {
    const r = suggestShelfLife({ storageTempC: 25, conditions: [realTime(obs.slice(0, 2)), oven45()] });
    const reg = r.reasons.find((x) => x.method === 'regression')!;
    expect(reg.figureMonths).toBeNull();
    expect(reg.message).toMatch(/2 results at 2 times fix a line exactly and leave nothing to estimate its spread; needs at least 3 results/);
    expect(r.basis).toBe('projection_only');
    expect(r.months).toBe(11);
  });
});

describe('Arrhenius line beside the rule of thumb', () => {
  it('fits the rates of a measured attribute at 3 temperatures (constructed from ΔH/R = 10 000 K, Haynes 1971)', () => {
    // Viscosity falls at rate k(T) = A·exp(-10000/T) per month; three constant conditions.
    const k = (c: number): number => 5e14 * Math.exp(-10000 / (c + 273.15));
    const cond = (c: number, role: 'real_time' | 'accelerated'): SuggestCondition => ({
      name: `${c} °C`,
      kind: 'constant',
      role,
      setpointC: c,
      attributes: [
        {
          name: 'viscosity',
          kind: 'measured',
          observations: [0, 1, 2, 3].map((m) => ({ months: m, value: 10000 - k(c) * m, passed: true })),
        },
      ],
    });
    const r = suggestShelfLife({ storage: 'room', conditions: [cond(25, 'real_time'), cond(40, 'accelerated'), cond(50, 'accelerated')] });
    const a = r.reasons.find((x) => x.method === 'arrhenius')!;
    expect(a.figureMonths).toBeNull();
    expect(a.message).toMatch(/Ea = 83\.1 kJ\/mol/);
    // Implied Q10 between 25 and 35 °C = exp(10000·(1/298.15 - 1/308.15)) = 2.97 (Arrhenius equation).
    expect(a.message).toMatch(/implied Q10 between 25 and 35 °C = 2\.97/);
    expect(a.dataPoints).toBe(12);
  });
});
