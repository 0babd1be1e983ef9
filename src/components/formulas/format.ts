/**
 * Number formatting for formulas: % w/w with 2 to 4 decimals, bench grams as the balance
 * shows them (0.01 g under 10 g, 0.1 g above), batch sizes in g or kg. Pure.
 */
import { BENCH_FINE_BELOW_GRAMS } from '@shared/compute/formula';
import { roundTo } from '@shared/compute/units';
import { INGREDIENT_FUNCTIONS, type IngredientFunction } from '@shared/domain';

const pct = new Intl.NumberFormat('en-GB', { minimumFractionDigits: 2, maximumFractionDigits: 4 });
const grouped = (places: number) => new Intl.NumberFormat('en-GB', { minimumFractionDigits: places, maximumFractionDigits: places });

/** "4.00", "0.3500" stays "0.35", "33.3333". */
export function percentText(x: number): string {
  return pct.format(roundTo(x, 4));
}

/** A change of a line's share, in percentage points of the formula: "+0.30 % w/w", "−1.30 % w/w". */
export function percentDeltaText(delta: number): string {
  return `${delta > 0 ? '+' : delta < 0 ? '−' : ''}${percentText(Math.abs(delta))} % w/w`;
}

/** Bench grams as weighed: "1,069.5", "4.50". */
export function benchGramsText(g: number): string {
  return g < BENCH_FINE_BELOW_GRAMS ? grouped(2).format(g) : grouped(1).format(g);
}

/** A batch size: "1,500 g" (whole grams when whole, else 2 decimals). */
export function gramsText(g: number): string {
  return `${Number.isInteger(g) ? grouped(0).format(g) : grouped(2).format(roundTo(g, 2))} g`;
}

/** The supplier's range: "0.50–1.00 %", "at most 0.50 %", "—". */
export function rangeText(min: number | null, max: number | null): string {
  if (min != null && max != null) return `${percentText(min)}–${percentText(max)} %`;
  if (min != null) return `at least ${percentText(min)} %`;
  if (max != null) return `at most ${percentText(max)} %`;
  return '';
}

export const FUNCTION_LABELS: Record<IngredientFunction, string> = {
  emulsifier: 'Emulsifier',
  preservative: 'Preservative',
  antioxidant: 'Antioxidant',
  fragrance: 'Fragrance',
  colorant: 'Colorant',
  butter: 'Butter',
  oil: 'Oil',
  active: 'Active',
  humectant: 'Humectant',
  thickener: 'Thickener',
  solvent: 'Solvent',
  other: 'Other',
};
export const FUNCTION_OPTIONS = INGREDIENT_FUNCTIONS.map((f) => ({ value: f, label: FUNCTION_LABELS[f] }));

/** Functions whose lines get a caution (ingredientCaution). */
export const CAUTION_FUNCTIONS: readonly IngredientFunction[] = ['preservative', 'antioxidant'];

const CHECK = "Check the supplier's data and your safety assessor";

/** The caution beside a preservative or antioxidant line, in that function's own words; null for the others. */
export function ingredientCaution(fn: IngredientFunction): string | null {
  if (fn === 'preservative') return `${CHECK}; local regulations set maximum concentrations for preservatives.`;
  if (fn === 'antioxidant') return `${CHECK}; local regulations may limit the concentration of some antioxidants.`;
  return null;
}

/** Both cautions at once, under the ingredient list. */
export const INGREDIENTS_CAUTION = `${CHECK}; local regulations set maximum concentrations for preservatives and may limit some antioxidants.`;

/** Parses what a person typed as a number ("1,5" reads as 1.5); NaN when it is not one. */
export function parseTyped(text: string): number {
  const s = text.trim().replace(',', '.');
  if (!/^[+-]?(\d+\.?\d*|\.\d+)$/.test(s)) return Number.NaN;
  return Number(s);
}
