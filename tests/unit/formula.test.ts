import { describe, expect, it } from 'vitest';
import {
  batchFromContainers,
  diffVariants,
  formulaTotal,
  gramsForBatch,
  largestRemainder,
  percentFromGrams,
  rangeWarnings,
  roundBenchGrams,
  scaleFormula,
  type FormulaLine,
} from '../../shared/compute/formula';
import { OUNCE_GRAMS, ouncesToGrams, roundTo } from '../../shared/compute/units';

describe('roundTo', () => {
  it('rounds the decimal literal, not its binary neighbour', () => {
    // 1.005 is stored as 1.00499999999999989..., so (1.005).toFixed(2) gives "1.00" in JavaScript
    // (IEEE 754 binary64; the toFixed pitfall is described on MDN's Number.prototype.toFixed page, from memory).
    expect((1.005).toFixed(2)).toBe('1.00');
    expect(roundTo(1.005, 2)).toBe(1.01);
    // Same pitfall, from memory of MDN: (2.55).toFixed(1) is "2.5"; decimal half-up gives 2.6.
    expect(roundTo(2.55, 1)).toBe(2.6);
  });

  it('rounds half away from zero and handles negatives, zero decimals and negative decimals', () => {
    // Hand arithmetic (constructed edge cases).
    expect(roundTo(-1.005, 2)).toBe(-1.01);
    expect(roundTo(2.5, 0)).toBe(3);
    expect(roundTo(-2.5, 0)).toBe(-3);
    expect(roundTo(1234.5, -2)).toBe(1200);
    expect(roundTo(0.6000000000000005, 4)).toBe(0.6);
    expect(roundTo(1e-7, 8)).toBe(1e-7);
    expect(roundTo(-0.0001, 2)).toBe(0);
    expect(Object.is(roundTo(-0.0001, 2), -0)).toBe(false);
  });

  it('leaves non-finite input alone and rejects fractional decimals', () => {
    // Constructed edge cases.
    expect(roundTo(Number.NaN, 2)).toBeNaN();
    expect(roundTo(Infinity, 2)).toBe(Infinity);
    expect(() => roundTo(1, 1.5)).toThrow(RangeError);
  });
});

describe('formulaTotal', () => {
  it('sums in ten-thousandths of a percent, free of binary drift', () => {
    // Hand arithmetic: 72.35 + 15 + 5 + 3 + 2.5 + 1 + 0.8 + 0.35 = 100 exactly (constructed edge case).
    const lines = [72.35, 15, 5, 3, 2.5, 1, 0.8, 0.35].map((percent) => ({ percent }));
    // Plain float addition drifts to 99.99999999999999 (IEEE 754 binary64).
    expect(lines.reduce((s, l) => s + l.percent, 0)).not.toBe(100);
    expect(formulaTotal(lines)).toEqual({ total: 100, missBy: 0, ok: true });

    // 60.7 + 30.1 + 9.2 = 100 by hand; float gives 100.00000000000001 (constructed edge case).
    expect(formulaTotal([{ percent: 60.7 }, { percent: 30.1 }, { percent: 9.2 }]).total).toBe(100);
  });

  it('accepts |total - 100| up to 0.01 % and reports the miss to 4 decimals', () => {
    // DESIGN.md: lines must sum to 100.00 %; the 0.01 % tolerance is this brief's rule (constructed edge cases).
    expect(formulaTotal([{ percent: 99.99 }])).toEqual({ total: 99.99, missBy: -0.01, ok: true });
    expect(formulaTotal([{ percent: 100.01 }])).toEqual({ total: 100.01, missBy: 0.01, ok: true });
    expect(formulaTotal([{ percent: 99.9899 }])).toEqual({ total: 99.9899, missBy: -0.0101, ok: false });
    expect(formulaTotal([{ percent: 60 }, { percent: 30.5 }])).toEqual({ total: 90.5, missBy: -9.5, ok: false });
    expect(formulaTotal([])).toEqual({ total: 0, missBy: -100, ok: false });
  });

  it('rejects non-finite percentages', () => {
    // Constructed edge case.
    expect(() => formulaTotal([{ percent: Number.NaN }])).toThrow(RangeError);
  });
});

describe('largestRemainder and percentFromGrams', () => {
  it('reproduces the largest remainder (Hare quota) worked example', () => {
    // Wikipedia, "Largest remainder method", example with 100 000 votes for 10 seats (from memory):
    // 47 000, 16 000, 15 800, 12 000, 6 100, 3 100 votes -> 5, 2, 1, 1, 1, 0 seats.
    expect(largestRemainder([47_000, 16_000, 15_800, 12_000, 6_100, 3_100], 10)).toEqual([5, 2, 1, 1, 1, 0]);
  });

  it('gives 4-decimal percentages that sum to exactly 100', () => {
    // Hand arithmetic: 1 g each of three ingredients is 33.3333... %; the spare 0.0001 % goes to the
    // first line on a tie (constructed edge case).
    const p = percentFromGrams([1, 1, 1]);
    expect(p).toEqual([33.3334, 33.3333, 33.3333]);
    expect(formulaTotal(p.map((percent) => ({ percent }))).total).toBe(100);

    // Hand arithmetic: 200 g + 50 g + 250 g = 500 g -> 40 %, 10 %, 50 % (constructed edge case).
    expect(percentFromGrams([200, 50, 250])).toEqual([40, 10, 50]);

    // Hand arithmetic: 1/7 = 14.2857|14...%, 6/7 = 85.7142|857...%; floors 14.2857 + 85.7142 leave one
    // 0.0001 % unit, which goes to the larger remainder (.857 > .143) -> 14.2857 and 85.7143
    // (constructed edge case).
    expect(percentFromGrams([1, 6])).toEqual([14.2857, 85.7143]);
  });

  it('keeps an ingredient weighed as 0 g at 0 %', () => {
    // Constructed edge case.
    expect(percentFromGrams([0, 3, 1])).toEqual([0, 75, 25]);
  });

  it('sums to 100 for many awkward weights', () => {
    // Constructed edge case: 37 weights of 1/(i+3) g.
    const grams = Array.from({ length: 37 }, (_, i) => 1 / (i + 3));
    const p = percentFromGrams(grams);
    expect(formulaTotal(p.map((percent) => ({ percent })))).toEqual({ total: 100, missBy: 0, ok: true });
    for (const x of p) expect(roundTo(x, 4)).toBe(x);
  });

  it('throws RangeError on negative, non-finite or zero total weights', () => {
    // Constructed edge cases.
    expect(() => percentFromGrams([1, -1, 2])).toThrow(RangeError);
    expect(() => percentFromGrams([1, Number.NaN])).toThrow(RangeError);
    expect(() => percentFromGrams([1, Infinity])).toThrow(RangeError);
    expect(() => percentFromGrams([0, 0])).toThrow(RangeError);
    expect(() => percentFromGrams([])).toThrow(RangeError);
  });
});

describe('batch sizes', () => {
  it('4 oz jar holds about 113.40 g', () => {
    // 1 international avoirdupois ounce = 28.349523125 g exactly (International Yard and Pound Agreement, 1959).
    expect(OUNCE_GRAMS).toBe(28.349523125);
    // A 4 oz jar holds about 113 g of a product of density near 1 (common practice, no published source):
    // 4 x 28.3495 g = 113.40 g.
    expect(roundTo(ouncesToGrams(4), 2)).toBe(113.4);
  });

  it('24 jars of 113.4 g with 10 % overage is 2993.8 g on the bench', () => {
    // Batch = containers x fill x (1 + overage/100) = 24 x 113.4 x 1.1 = 2993.76 g (hand arithmetic),
    // weighed to 0.1 g above 10 g (common practice, no published source).
    const batch = batchFromContainers({ containers: 24, fillGrams: 113.4, overagePercent: 10 });
    expect(batch).toBeCloseTo(2993.76, 9);
    expect(roundBenchGrams(batch)).toBe(2993.8);
    // Overage defaults to 0: 24 x 113.4 = 2721.6 g.
    expect(batchFromContainers({ containers: 24, fillGrams: 113.4 })).toBeCloseTo(2721.6, 9);
  });

  it('rejects negative sizes', () => {
    // Constructed edge cases.
    expect(() => batchFromContainers({ containers: -1, fillGrams: 50 })).toThrow(RangeError);
    expect(() => batchFromContainers({ containers: 1, fillGrams: 50, overagePercent: -5 })).toThrow(RangeError);
    expect(() => gramsForBatch([50, 50], -1)).toThrow(RangeError);
  });

  it('grams for a batch are % / 100 x batch', () => {
    // Hand arithmetic: 70 / 25 / 5 % of 500 g = 350 / 125 / 25 g (constructed edge case).
    expect(gramsForBatch([70, 25, 5], 500)).toEqual([350, 125, 25]);
  });
});

describe('roundBenchGrams', () => {
  it('weighs to 0.01 g under 10 g and 0.1 g from 10 g (common practice, no published source)', () => {
    // Boundaries by hand (constructed edge cases).
    expect(roundBenchGrams(1.005)).toBe(1.01);
    expect(roundBenchGrams(9.994)).toBe(9.99);
    expect(roundBenchGrams(9.996)).toBe(10);
    expect(roundBenchGrams(10)).toBe(10);
    expect(roundBenchGrams(10.04)).toBe(10);
    expect(roundBenchGrams(10.05)).toBe(10.1);
    expect(roundBenchGrams(0.004)).toBe(0);
    expect(() => roundBenchGrams(-1)).toThrow(RangeError);
  });
});

describe('scaleFormula', () => {
  it('gives exact and bench grams and the weighed total', () => {
    // Hand arithmetic (constructed edge case): 500 g of 70 / 25 / 4.7 / 0.3 %.
    const lines = [
      { name: 'Water', percent: 70 },
      { name: 'Oil', percent: 25 },
      { name: 'Emulsifier', percent: 4.7 },
      { name: 'Preservative', percent: 0.3 },
    ];
    const s = scaleFormula(lines, 500);
    expect(s.lines.map((l) => l.name)).toEqual(['Water', 'Oil', 'Emulsifier', 'Preservative']);
    expect(s.lines.map((l) => l.grams)).toEqual([350, 125, 23.5, 1.5]);
    expect(s.lines.map((l) => l.benchGrams)).toEqual([350, 125, 23.5, 1.5]);
    expect(s.batchGrams).toBe(500);
    expect(s.benchTotalGrams).toBe(500);
  });

  it('shows when bench rounding leaves the weighed total short of the batch', () => {
    // Hand arithmetic: 10 g of 33.3333 / 33.3333 / 33.3334 % = 3.333330 / 3.333330 / 3.333340 g,
    // each weighed as 3.33 g, total 9.99 g (constructed edge case).
    const s = scaleFormula([{ percent: 33.3333 }, { percent: 33.3333 }, { percent: 33.3334 }], 10);
    expect(s.lines.map((l) => l.benchGrams)).toEqual([3.33, 3.33, 3.33]);
    expect(s.lines[2].grams).toBeCloseTo(3.33334, 12);
    expect(s.benchTotalGrams).toBe(9.99);
  });
});

describe('rangeWarnings', () => {
  it('warns above the supplier maximum with the agreed wording', () => {
    // EU Regulation 1223/2009 Annex V (entry 29) caps phenoxyethanol at 1 % in the ready-for-use
    // preparation (from memory); suppliers quote the same maximum.
    const w = rangeWarnings([{ ingredientName: 'Phenoxyethanol', percent: 1.2, useMin: 0.5, useMax: 1 }]);
    expect(w).toHaveLength(1);
    expect(w[0]).toMatchObject({ index: 0, kind: 'above_max', limit: 1, percent: 1.2 });
    expect(w[0].message).toBe("Phenoxyethanol at 1.20 % is above the supplier's recommended maximum of 1.00 %");
  });

  it('warns below the minimum, not on the limits, and skips missing limits', () => {
    // Constructed edge cases (limits are hypothetical supplier figures).
    const w = rangeWarnings([
      { ingredientName: 'Antioxidant X', percent: 0.05, useMin: 0.1, useMax: 1 },
      { ingredientName: 'Preservative Y', percent: 1, useMin: 0.5, useMax: 1 },
      { ingredientName: 'Preservative Z', percent: 0.5, useMin: 0.5, useMax: 1 },
      { ingredientName: 'Water', percent: 70 },
      { ingredientName: 'Oil', percent: 20, useMin: null, useMax: null },
      // 0.1 + 0.2 = 0.30000000000000004 must not count as above a 0.3 % limit.
      { ingredientName: 'Thickener', percent: 0.1 + 0.2, useMax: 0.3 },
    ]);
    expect(w).toHaveLength(1);
    expect(w[0]).toMatchObject({ index: 0, kind: 'below_min', limit: 0.1 });
    expect(w[0].message).toBe("Antioxidant X at 0.05 % is below the supplier's recommended minimum of 0.10 %");
  });
});

describe('diffVariants', () => {
  // DESIGN.md's example variants: "A: 4 % emulsifier", "B: 5 % emulsifier + 0.3 % xanthan"
  // (the other lines are constructed to make the totals 100 %).
  const a: FormulaLine[] = [
    { ingredientId: 1, ingredientName: 'Water', phase: 'A', percent: 75 },
    { ingredientId: 2, ingredientName: 'Emulsifier', phase: 'B', percent: 4 },
    { ingredientId: 3, ingredientName: 'Oil', phase: 'B', percent: 20 },
    { ingredientId: 4, ingredientName: 'Preservative', phase: 'C', percent: 1 },
  ];
  const b: FormulaLine[] = [
    { ingredientId: 5, ingredientName: 'Xanthan', phase: 'A', percent: 0.3 },
    { ingredientId: 1, ingredientName: 'Water', phase: 'A', percent: 73.7 },
    { ingredientId: 2, ingredientName: 'Emulsifier', phase: 'B', percent: 5 },
    { ingredientId: 3, ingredientName: 'Oil', phase: 'B', percent: 20 },
    { ingredientId: 4, ingredientName: 'Preservative', phase: 'D', percent: 1 },
  ];

  it('classifies lines in a’s order then b’s new ones', () => {
    const d = diffVariants(a, b);
    expect(d.rows.map((r) => [r.ingredientId, r.status])).toEqual([
      [1, 'changed'],
      [2, 'changed'],
      [3, 'unchanged'],
      [4, 'changed'],
      [5, 'added'],
    ]);
    expect(d.rows[0].percentDelta).toBe(-1.3);
    expect(d.rows[0].changes).toEqual(['percent']);
    expect(d.rows[1].percentDelta).toBe(1);
    expect(d.rows[3].changes).toEqual(['phase']);
    expect(d.rows[4].percentDelta).toBe(0.3);
    expect(d.counts).toEqual({ added: 1, removed: 0, changed: 3, unchanged: 1 });
  });

  it('reports removed lines and matches repeated ingredients by occurrence', () => {
    // Constructed edge case: water in two phases; the second water line is dropped in b.
    const a2: FormulaLine[] = [
      { ingredientId: 'water', phase: 'A', percent: 60 },
      { ingredientId: 'water', phase: 'C', percent: 10 },
      { ingredientId: 'glycerin', phase: 'A', percent: 30 },
    ];
    const b2: FormulaLine[] = [
      { ingredientId: 'glycerin', phase: 'A', percent: 30.0 },
      { ingredientId: 'water', phase: 'A', percent: 70 },
    ];
    const d = diffVariants(a2, b2);
    expect(d.rows.map((r) => r.status)).toEqual(['changed', 'removed', 'unchanged']);
    expect(d.rows[0].percentDelta).toBe(10);
    expect(d.rows[1].percentDelta).toBe(-10);
    expect(d.counts).toEqual({ added: 0, removed: 1, changed: 1, unchanged: 1 });
  });

  it('does not confuse numeric and string ids, and treats null and missing phase alike', () => {
    // Constructed edge case.
    const d = diffVariants<FormulaLine>(
      [{ ingredientId: 1, percent: 50, phase: null }, { ingredientId: 2, percent: 50 }],
      [{ ingredientId: '1', percent: 50 }, { ingredientId: 2, percent: 50, phase: null }],
    );
    expect(d.rows.map((r) => [r.ingredientId, r.status])).toEqual([
      [1, 'removed'],
      [2, 'unchanged'],
      ['1', 'added'],
    ]);
  });
});

describe('formula words on screen', () => {
  it('writes a change of share in points of the formula, "% w/w"', async () => {
    const { percentDeltaText } = await import('../../src/components/formulas/format');
    expect(percentDeltaText(-1.3)).toBe('−1.30 % w/w');
    expect(percentDeltaText(0.3)).toBe('+0.30 % w/w');
  });

  it('cautions preservatives and antioxidants each in their own words', async () => {
    const { ingredientCaution, INGREDIENTS_CAUTION } = await import('../../src/components/formulas/format');
    expect(ingredientCaution('preservative')).toMatch(/maximum concentrations for preservatives/);
    expect(ingredientCaution('antioxidant')).toMatch(/antioxidants/);
    expect(ingredientCaution('antioxidant')).not.toMatch(/preservative/);
    expect(ingredientCaution('oil')).toBeNull();
    expect(INGREDIENTS_CAUTION).toMatch(/preservatives and may limit some antioxidants/);
  });
});
