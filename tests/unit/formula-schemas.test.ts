import { describe, expect, it } from 'vitest';
import { formulaTotal } from '../../shared/compute/formula';
import {
  batchInput,
  ingredientInput,
  scaleQuery,
  todayIn,
  totalLabel,
  totalProblem,
  variantSaveInput,
} from '../../shared/schemas/formulas';
import { nextVariantCode } from '../../server/services/formulas';

const total = (...percents: number[]) => formulaTotal(percents.map((percent) => ({ percent })));

describe('total messages', () => {
  // Hand arithmetic on constructed formulas; the 0.01 % tolerance is formulaTotal's (shared/compute/formula.ts).
  it('says by how much a formula misses 100 %', () => {
    expect(totalProblem(total(60, 39.5))).toBe('Lines total 99.50 %: 0.50 % short of 100 %');
    expect(totalProblem(total(60, 40.2))).toBe('Lines total 100.20 %: 0.20 % over 100 %');
    expect(totalProblem(total(60, 40))).toBeNull();
    expect(totalProblem(total(60, 39.995))).toBeNull();
    expect(totalLabel(total(60, 40))).toBe('Total 100.00 %');
    expect(totalLabel(total(60, 39.5))).toBe('Total 99.50 %: 0.50 % to go');
    // An empty formula: the miss is not written as a subtraction ("0.00 % - 100.00 % short").
    expect(totalLabel(total(0))).toBe('Total 0.00 %: 100.00 % to go');
  });

  it('shows four decimals when two would hide why a total was refused', () => {
    expect(totalProblem(total(60, 39.985))).toBe('Lines total 99.9850 %: 0.0150 % short of 100 %');
    expect(totalLabel(total(60, 40.0125))).toBe('Total 100.0125 %: 0.0125 % over');
    expect(totalLabel(total(50, 49))).toBe('Total 99.00 %: 1.00 % to go');
  });
});

describe('variant code suggestion (our own rule)', () => {
  it('takes the letter after the highest one used, then any free letter, then two letters', () => {
    expect(nextVariantCode([])).toBe('A');
    expect(nextVariantCode(['A', 'B'])).toBe('C');
    expect(nextVariantCode(['A', 'C'])).toBe('D');
    expect(nextVariantCode(['B2', 'A'])).toBe('B');
    expect(nextVariantCode(['Z'])).toBe('A');
    expect(nextVariantCode(Array.from({ length: 26 }, (_, i) => String.fromCharCode(65 + i)))).toBe('AA');
  });
});

describe('shared request schemas', () => {
  it('names the line and field of a bad percent', () => {
    const r = variantSaveInput.safeParse({
      code: 'a',
      name: 'A',
      lines: [
        { ingredientId: 1, phase: 'A', percent: 50 },
        { ingredientId: 2, phase: 'B', percent: -1 },
      ],
    });
    expect(r.success).toBe(false);
    expect(r.error!.issues[0].path).toEqual(['lines', 1, 'percent']);
    const ok = variantSaveInput.parse({ code: ' b2 ', name: 'B', lines: [{ ingredientId: 1, phase: 'A', percent: 100 }] });
    expect(ok.code).toBe('B2');
  });

  it('checks the use range order and empties blank text', () => {
    const bad = ingredientInput.safeParse({ tradeName: 'X', inciName: 'Aqua', function: 'solvent', useMinPercent: 3, useMaxPercent: 1 });
    expect(bad.error!.issues[0].path).toEqual(['useMaxPercent']);
    const ok = ingredientInput.parse({ tradeName: 'X', inciName: 'Aqua', function: 'solvent', supplier: '  ' });
    expect(ok.supplier).toBeNull();
  });

  it('needs a fill unit with a fill amount, and a real date', () => {
    const base = { lotCode: 'L1', madeOn: '2026-03-01', sizeGrams: 1000, packaging: 'jar' };
    expect(batchInput.safeParse(base).success).toBe(true);
    expect(batchInput.safeParse({ ...base, fillAmount: 50 }).error!.issues[0].path).toEqual(['fillUnit']);
    expect(batchInput.safeParse({ ...base, madeOn: '2026-02-29' }).success).toBe(false); // 2026 is not a leap year
    expect(batchInput.safeParse({ ...base, madeOn: '2024-02-29' }).success).toBe(true);
  });

  it('reads scaling queries', () => {
    expect(scaleQuery.parse({ batchGrams: '1500' })).toEqual({ batchGrams: 1500 });
    expect(scaleQuery.parse({ containers: '12', fillOunces: '4' })).toEqual({ containers: 12, fillOunces: 4 });
    expect(scaleQuery.safeParse({ containers: '12' }).success).toBe(false);
    expect(scaleQuery.safeParse({}).success).toBe(false);
  });

  it("gives today's date in the lab's time zone", () => {
    // 23:30 UTC on 1 Dec is already 2 Dec in Berlin (UTC+1 in winter) and still 1 Dec in Chicago (UTC-6).
    const at = new Date('2026-12-01T23:30:00Z');
    expect(todayIn('Europe/Berlin', at)).toBe('2026-12-02');
    expect(todayIn('America/Chicago', at)).toBe('2026-12-01');
  });
});
