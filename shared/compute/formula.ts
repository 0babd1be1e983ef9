/**
 * Formula (variant) arithmetic: totals, % from weighed grams, batch scaling, bench rounding,
 * supplier use-range warnings and variant diffs. Pure functions; no I/O.
 */
import { roundTo } from './units';

/** Percentages are handled internally as integers in ten-thousandths of a percent (0.0001 %). */
const UNITS_PER_PERCENT = 10_000;
const HUNDRED_PERCENT_UNITS = 100 * UNITS_PER_PERCENT;
/** |total - 100| at or below this (in %) counts as summing to 100.00 %. */
export const FORMULA_TOTAL_TOLERANCE = 0.01;
/** Float slack for comparisons against use limits. */
const EPS = 1e-9;

/** Identifier of an ingredient as stored (database id or code). */
export type IngredientId = string | number;

/** One formula line as the diff sees it. */
export interface FormulaLine {
  ingredientId: IngredientId;
  ingredientName?: string;
  phase?: string | null;
  percent: number;
}

/** Result of {@link formulaTotal}. */
export interface FormulaTotal {
  /** Sum of the lines, % w/w, exact to 0.0001 %. */
  total: number;
  /** total - 100, rounded to 4 decimals (negative = short of 100 %). */
  missBy: number;
  /** True when |missBy| <= 0.01 %. */
  ok: boolean;
}

function assertFinite(x: number, what: string): void {
  if (!Number.isFinite(x)) throw new RangeError(`${what} must be a finite number, got ${x}`);
}

function toUnits(percent: number): number {
  assertFinite(percent, 'percent');
  return Math.round(roundTo(percent * UNITS_PER_PERCENT, 6));
}

/**
 * Sums formula lines in integer ten-thousandths of a percent, so 33.3333 + 33.3333 + 33.3334
 * is exactly 100. Each line is first rounded to 0.0001 %. Throws RangeError on a non-finite percent.
 */
export function formulaTotal(lines: ReadonlyArray<{ percent: number }>): FormulaTotal {
  let units = 0;
  for (const line of lines) units += toUnits(line.percent);
  const missUnits = units - HUNDRED_PERCENT_UNITS;
  return {
    total: units / UNITS_PER_PERCENT,
    missBy: missUnits / UNITS_PER_PERCENT,
    ok: Math.abs(missUnits) <= FORMULA_TOTAL_TOLERANCE * UNITS_PER_PERCENT,
  };
}

/**
 * Largest-remainder (Hamilton) apportionment: splits the integer `total` among non-negative
 * `weights` in proportion, giving each its whole quota and the leftover units to the largest
 * fractional remainders (ties go to the earlier entry). The result sums to exactly `total`.
 * Throws RangeError on a negative or non-finite weight, a zero weight sum, or a non-integer total.
 */
export function largestRemainder(weights: ReadonlyArray<number>, total: number): number[] {
  if (!Number.isInteger(total) || total < 0) throw new RangeError(`total must be a non-negative integer, got ${total}`);
  let sum = 0;
  for (const w of weights) {
    assertFinite(w, 'weight');
    if (w < 0) throw new RangeError(`weights must not be negative, got ${w}`);
    sum += w;
  }
  if (!(sum > 0)) throw new RangeError('the weights total zero; cannot apportion');
  const floors: number[] = [];
  const remainders: number[] = [];
  let allotted = 0;
  for (const w of weights) {
    const exact = (w / sum) * total;
    // Slack so that e.g. 249999.99999999997 (really 250000) is not floored to 249999.
    const floor = Math.floor(exact + 1e-12 * Math.max(1, exact));
    floors.push(floor);
    remainders.push(exact - floor);
    allotted += floor;
  }
  const order = remainders
    .map((r, i) => ({ r, i }))
    .sort((x, y) => y.r - x.r || x.i - y.i);
  let left = total - allotted;
  for (let k = 0; left > 0; k = (k + 1) % order.length, left--) floors[order[k].i] += 1;
  // Only reachable through the float slack above on quotas a hair below an integer: take back from the smallest remainders.
  for (let k = order.length - 1; left < 0; k = (k - 1 + order.length) % order.length, left++) {
    if (floors[order[k].i] > 0) floors[order[k].i] -= 1;
    else left--;
  }
  return floors;
}

/**
 * Converts weighed grams to % w/w with 4 decimals that sum to exactly 100.0000,
 * using largest-remainder rounding in units of 0.0001 % (ties go to the earlier line).
 * Throws RangeError on a negative or non-finite weight, or when the weights total zero.
 */
export function percentFromGrams(grams: ReadonlyArray<number>): number[] {
  return largestRemainder(grams, HUNDRED_PERCENT_UNITS).map((u) => u / UNITS_PER_PERCENT);
}

/** Exact (unrounded) grams of each line for a batch of `batchGrams`: g = % / 100 x batch. */
export function gramsForBatch(percents: ReadonlyArray<number>, batchGrams: number): number[] {
  assertFinite(batchGrams, 'batchGrams');
  if (batchGrams < 0) throw new RangeError(`batchGrams must not be negative, got ${batchGrams}`);
  return percents.map((p) => {
    assertFinite(p, 'percent');
    return (p / 100) * batchGrams;
  });
}

/** Input of {@link batchFromContainers}. */
export interface ContainerBatch {
  /** Number of containers to fill. */
  containers: number;
  /** Grams of product per container. */
  fillGrams: number;
  /** Extra made to cover losses in the vessel and filling, % (default 0). */
  overagePercent?: number;
}

/** Batch size in grams for N containers: containers x fill x (1 + overage / 100). Unrounded. */
export function batchFromContainers({ containers, fillGrams, overagePercent = 0 }: ContainerBatch): number {
  assertFinite(containers, 'containers');
  assertFinite(fillGrams, 'fillGrams');
  assertFinite(overagePercent, 'overagePercent');
  if (containers < 0 || fillGrams < 0) throw new RangeError('containers and fillGrams must not be negative');
  if (overagePercent < 0) throw new RangeError('overagePercent must not be negative');
  return containers * fillGrams * (1 + overagePercent / 100);
}

/** Bench rounding threshold: below this many grams weigh to 0.01 g, at or above to 0.1 g. */
export const BENCH_FINE_BELOW_GRAMS = 10;

/**
 * Rounds a weight to what a bench balance shows: 0.01 g under 10 g, 0.1 g at or above 10 g
 * (common practice for a small lab with a 0.01 g balance; no published source).
 */
export function roundBenchGrams(g: number): number {
  assertFinite(g, 'grams');
  if (g < 0) throw new RangeError(`grams must not be negative, got ${g}`);
  return g < BENCH_FINE_BELOW_GRAMS ? roundTo(g, 2) : roundTo(g, 1);
}

/** One line of a scaled formula. */
export type ScaledLine<T> = T & {
  /** Exact grams for the batch. */
  grams: number;
  /** Grams rounded for the bench ({@link roundBenchGrams}). */
  benchGrams: number;
};

/** Result of {@link scaleFormula}. */
export interface ScaledFormula<T> {
  lines: ScaledLine<T>[];
  /** The requested batch size, g. */
  batchGrams: number;
  /** Sum of the bench-rounded grams (what will actually be weighed), to 0.01 g. */
  benchTotalGrams: number;
}

/** Scales formula lines to a batch: exact grams, bench-rounded grams and the bench-rounded total. */
export function scaleFormula<T extends { percent: number }>(
  lines: ReadonlyArray<T>,
  batchGrams: number,
): ScaledFormula<T> {
  const grams = gramsForBatch(
    lines.map((l) => l.percent),
    batchGrams,
  );
  let hundredths = 0;
  const scaled = lines.map((line, i) => {
    const benchGrams = roundBenchGrams(grams[i]);
    hundredths += Math.round(roundTo(benchGrams * 100, 6));
    return { ...line, grams: grams[i], benchGrams };
  });
  return { lines: scaled, batchGrams, benchTotalGrams: hundredths / 100 };
}

/** A line checked against the supplier's recommended use range. */
export interface RangeCheckLine {
  ingredientName: string;
  percent: number;
  /** Supplier's recommended minimum use level, %. */
  useMin?: number | null;
  /** Supplier's recommended maximum use level, %. */
  useMax?: number | null;
}

/** A use-range warning (advice, not an error: the formula can still be saved). */
export interface RangeWarning {
  /** Index of the line in the input. */
  index: number;
  ingredientName: string;
  percent: number;
  kind: 'below_min' | 'above_max';
  /** The supplier limit that was crossed, %. */
  limit: number;
  message: string;
}

function pct2(x: number): string {
  return `${roundTo(x, 2).toFixed(2)} %`;
}

/**
 * Warns for lines outside the supplier's recommended use range, e.g.
 * "Phenoxyethanol at 1.20 % is above the supplier's recommended maximum of 1.00 %".
 * A line exactly on a limit is inside the range.
 */
export function rangeWarnings(lines: ReadonlyArray<RangeCheckLine>): RangeWarning[] {
  const warnings: RangeWarning[] = [];
  lines.forEach((line, index) => {
    const { ingredientName, percent, useMin, useMax } = line;
    if (useMax != null && Number.isFinite(useMax) && percent > useMax + EPS) {
      warnings.push({
        index,
        ingredientName,
        percent,
        kind: 'above_max',
        limit: useMax,
        message: `${ingredientName} at ${pct2(percent)} is above the supplier's recommended maximum of ${pct2(useMax)}`,
      });
    } else if (useMin != null && Number.isFinite(useMin) && percent < useMin - EPS) {
      warnings.push({
        index,
        ingredientName,
        percent,
        kind: 'below_min',
        limit: useMin,
        message: `${ingredientName} at ${pct2(percent)} is below the supplier's recommended minimum of ${pct2(useMin)}`,
      });
    }
  });
  return warnings;
}

/** How a line differs between two variants. */
export type DiffStatus = 'added' | 'removed' | 'changed' | 'unchanged';

/** One row of {@link diffVariants}. */
export interface VariantDiffRow<L extends FormulaLine = FormulaLine> {
  ingredientId: IngredientId;
  status: DiffStatus;
  /** The line in variant a (absent when added). */
  a?: L;
  /** The line in variant b (absent when removed). */
  b?: L;
  /** What changed, for 'changed' rows. */
  changes: Array<'percent' | 'phase'>;
  /** b.percent - a.percent, to 0.0001 % (a missing side counts as 0). */
  percentDelta: number;
}

/** Result of {@link diffVariants}: rows in a's order, then b's new lines in b's order, plus counts. */
export interface VariantDiff<L extends FormulaLine = FormulaLine> {
  rows: VariantDiffRow<L>[];
  counts: Record<DiffStatus, number>;
}

function occurrenceKeys<L extends FormulaLine>(lines: ReadonlyArray<L>): string[] {
  const seen = new Map<string, number>();
  return lines.map((l) => {
    const base = `${typeof l.ingredientId}:${String(l.ingredientId)}`;
    const k = seen.get(base) ?? 0;
    seen.set(base, k + 1);
    return `${base}#${k}`;
  });
}

function samePhase(x: string | null | undefined, y: string | null | undefined): boolean {
  return (x ?? '') === (y ?? '');
}

/**
 * Compares two variants keyed by ingredient id. Percentages are compared to 0.0001 %.
 * If one ingredient appears on several lines (e.g. water in two phases), its n-th line in a
 * is matched with its n-th line in b.
 */
export function diffVariants<L extends FormulaLine>(a: ReadonlyArray<L>, b: ReadonlyArray<L>): VariantDiff<L> {
  const aKeys = occurrenceKeys(a);
  const bKeys = occurrenceKeys(b);
  const bByKey = new Map<string, L>();
  bKeys.forEach((k, i) => bByKey.set(k, b[i]));
  const aKeySet = new Set(aKeys);
  const rows: VariantDiffRow<L>[] = [];
  const counts: Record<DiffStatus, number> = { added: 0, removed: 0, changed: 0, unchanged: 0 };

  a.forEach((la, i) => {
    const lb = bByKey.get(aKeys[i]);
    if (!lb) {
      rows.push({ ingredientId: la.ingredientId, status: 'removed', a: la, changes: [], percentDelta: -toUnits(la.percent) / UNITS_PER_PERCENT });
      counts.removed++;
      return;
    }
    const deltaUnits = toUnits(lb.percent) - toUnits(la.percent);
    const changes: Array<'percent' | 'phase'> = [];
    if (deltaUnits !== 0) changes.push('percent');
    if (!samePhase(la.phase, lb.phase)) changes.push('phase');
    const status: DiffStatus = changes.length > 0 ? 'changed' : 'unchanged';
    rows.push({ ingredientId: la.ingredientId, status, a: la, b: lb, changes, percentDelta: deltaUnits / UNITS_PER_PERCENT });
    counts[status]++;
  });
  b.forEach((lb, i) => {
    if (aKeySet.has(bKeys[i])) return;
    rows.push({ ingredientId: lb.ingredientId, status: 'added', b: lb, changes: [], percentDelta: toUnits(lb.percent) / UNITS_PER_PERCENT });
    counts.added++;
  });
  return { rows, counts };
}
