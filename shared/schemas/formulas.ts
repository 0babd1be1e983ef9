/**
 * Request schemas and response shapes of the Formulas area (products, ingredient library,
 * variants with formula lines, batches). Used by the server to validate and by the client
 * to check before sending, so both give the same messages.
 */
import { z } from 'zod';
import { calendarDate, text } from './common';
import { INGREDIENT_FUNCTIONS, PRODUCT_TYPES, type IngredientFunction, type ProductType, type StudyStatus } from '../domain';
import { roundTo } from '../compute/units';
import type { DiffStatus, FormulaTotal, RangeWarning } from '../compute/formula';

/** Most formula lines a variant may have. */
export const MAX_LINES = 100;
/** Largest batch the app accepts, g (1 t). */
export const MAX_BATCH_GRAMS = 1_000_000;

const decimals = (x: number, places: number) => Math.abs(x * 10 ** places - Math.round(x * 10 ** places)) < 1e-6;

const requiredText = (max: number, empty: string) =>
  text()
    .trim()
    .min(1, empty)
    .max(max, `At most ${max} characters`);

/** Optional free text: '' and null both mean "none". */
const optionalText = (max: number) =>
  text()
    .trim()
    .max(max, `At most ${max} characters`)
    .transform((s) => (s === '' ? null : s))
    .nullable()
    .optional();

const notes = optionalText(2000);

// ---------------------------------------------------------------- products

export const productType = z.enum(PRODUCT_TYPES, { error: 'Choose a product type' });

export const productInput = z.strictObject({
  name: requiredText(120, 'Enter the product name, e.g. "Calendula hand cream"'),
  type: productType,
  notes,
});
export type ProductInput = z.input<typeof productInput>;

export const productPatch = productInput.partial();
export type ProductPatch = z.input<typeof productPatch>;

// ---------------------------------------------------------------- ingredients

/** A percentage of the formula, 0..100, at most 4 decimals. */
const usePercent = z
  .number({ error: 'Enter a number (% w/w)' })
  .min(0, 'At least 0 %')
  .max(100, 'At most 100 %')
  .refine((x) => decimals(x, 4), 'At most 4 decimals');

const ingredientFields = {
  tradeName: requiredText(120, 'Enter the trade name on the supplier\'s label'),
  inciName: requiredText(250, 'Enter the INCI name, e.g. "Glycerin"'),
  function: z.enum(INGREDIENT_FUNCTIONS, { error: 'Choose what the ingredient does' }),
  useMinPercent: usePercent.nullable().optional(),
  useMaxPercent: usePercent.nullable().optional(),
  supplier: optionalText(120),
  notes,
};

/** The recommended range's ends must be in order; the message sits on the maximum. */
export function useRangeProblem(min: number | null | undefined, max: number | null | undefined): string | null {
  if (min != null && max != null && min > max) return 'The maximum must not be below the minimum';
  return null;
}

export const ingredientInput = z.strictObject(ingredientFields).superRefine((v, ctx) => {
  const problem = useRangeProblem(v.useMinPercent, v.useMaxPercent);
  if (problem) ctx.addIssue({ code: 'custom', path: ['useMaxPercent'], message: problem });
});
export type IngredientInput = z.input<typeof ingredientInput>;

/** A partial change; the server checks the range again against the stored other end. */
export const ingredientPatch = z.strictObject(ingredientFields).partial().superRefine((v, ctx) => {
  const problem = useRangeProblem(v.useMinPercent, v.useMaxPercent);
  if (problem) ctx.addIssue({ code: 'custom', path: ['useMaxPercent'], message: problem });
});
export type IngredientPatch = z.input<typeof ingredientPatch>;

// ---------------------------------------------------------------- variants

/** A line's share of the formula: more than 0 and at most 100 % w/w, at most 4 decimals. */
export const linePercent = z
  .number({ error: 'Enter the percent as a number' })
  .gt(0, 'Must be more than 0 %')
  .max(100, 'At most 100 %')
  .refine((x) => decimals(x, 4), 'At most 4 decimals (0.0001 %)');

export const formulaLineInput = z.strictObject({
  ingredientId: z
    .number({ error: 'Choose an ingredient from the library' })
    .int('Choose an ingredient from the library')
    .positive('Choose an ingredient from the library'),
  phase: requiredText(24, 'Enter a phase, e.g. A'),
  percent: linePercent,
});
export type FormulaLineInput = z.input<typeof formulaLineInput>;

export const variantCode = text('Enter a short code, e.g. A')
  .trim()
  .min(1, 'Enter a short code, e.g. A')
  .max(16, 'At most 16 characters')
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'Letters and digits, e.g. A or B2')
  .toUpperCase();

const variantName = requiredText(160, 'Enter a name, e.g. "4 % emulsifier"');

export const variantCreateInput = z.strictObject({
  /** Left out: the next free letter. */
  code: variantCode.optional(),
  name: variantName,
  notes,
  /** May be empty: a variant can be started and its lines entered later. */
  lines: z.array(formulaLineInput).max(MAX_LINES, `At most ${MAX_LINES} lines`).optional(),
});
export type VariantCreateInput = z.input<typeof variantCreateInput>;

/** PUT: replaces the header and all lines. */
export const variantSaveInput = z.strictObject({
  code: variantCode,
  name: variantName,
  notes,
  lines: z.array(formulaLineInput).min(1, 'Add at least one line').max(MAX_LINES, `At most ${MAX_LINES} lines`),
});
export type VariantSaveInput = z.input<typeof variantSaveInput>;

export const variantDeriveInput = z.strictObject({
  code: variantCode.optional(),
  name: variantName.optional(),
});
export type VariantDeriveInput = z.input<typeof variantDeriveInput>;

/**
 * Total and shortfall as text. Two decimals, unless a small miss would be misread at two
 * (99.985 % is refused, but "99.99 %: 0.02 % short" does not add up): then four.
 */
function totalParts(t: FormulaTotal): { total: string; miss: string; side: 'short' | 'over' } {
  const miss = Math.abs(t.missBy);
  const places = miss < 0.1 && roundTo(miss, 2) !== roundTo(miss, 4) ? 4 : 2;
  return { total: roundTo(t.total, places).toFixed(places), miss: roundTo(miss, places).toFixed(places), side: t.missBy < 0 ? 'short' : 'over' };
}

/** "Total 100.00 %", "Total 99.50 %: 0.50 % to go", "Total 100.20 %: 0.20 % over" (no minus sign that reads as a subtraction). */
export function totalLabel(t: FormulaTotal): string {
  if (t.ok) return `Total ${roundTo(t.total, 2).toFixed(2)} %`;
  const p = totalParts(t);
  return `Total ${p.total} %: ${p.miss} % ${p.side === 'short' ? 'to go' : 'over'}`;
}

/** The server's refusal: "Lines total 99.50 %: 0.50 % short of 100 %". */
export function totalProblem(t: FormulaTotal): string | null {
  if (t.ok) return null;
  const p = totalParts(t);
  return `Lines total ${p.total} %: ${p.miss} % ${p.side === 'short' ? 'short of' : 'over'} 100 %`;
}

// ---------------------------------------------------------------- scaling

const queryNumber = (what: string) =>
  z
    .string({ error: `Enter ${what}` })
    .trim()
    .regex(/^\d{1,9}(\.\d{1,4})?$/, `Enter ${what} as a plain number, e.g. 12.5`)
    .transform(Number);

/** GET /variants/:id/scale: either ?batchGrams= or ?containers=&fillGrams= (or fillOunces=)&overagePercent=. */
export const scaleQuery = z
  .strictObject({
    batchGrams: queryNumber('the batch size in grams').optional(),
    containers: queryNumber('the number of containers').optional(),
    fillGrams: queryNumber('the fill weight in grams').optional(),
    fillOunces: queryNumber('the fill weight in ounces').optional(),
    overagePercent: queryNumber('the overage in %').optional(),
  })
  .superRefine((q, ctx) => {
    const bad = (path: string, message: string) => ctx.addIssue({ code: 'custom', path: [path], message });
    if (q.batchGrams != null) {
      if (q.containers != null || q.fillGrams != null || q.fillOunces != null || q.overagePercent != null)
        bad('batchGrams', 'Give either a batch size or containers, not both');
      else if (!(q.batchGrams > 0) || q.batchGrams > MAX_BATCH_GRAMS) bad('batchGrams', `Between 0 and ${MAX_BATCH_GRAMS} g`);
      return;
    }
    if (q.containers == null) return bad('batchGrams', 'Give a batch size in grams, or a number of containers and a fill weight');
    if (!Number.isInteger(q.containers) || q.containers < 1 || q.containers > 100_000) bad('containers', 'A whole number from 1 to 100000');
    if ((q.fillGrams == null) === (q.fillOunces == null)) bad('fillGrams', 'Give the fill weight in grams or in ounces');
    const fill = q.fillGrams ?? q.fillOunces;
    if (fill != null && !(fill > 0)) bad(q.fillGrams != null ? 'fillGrams' : 'fillOunces', 'Must be more than 0');
    if (q.overagePercent != null && q.overagePercent > 100) bad('overagePercent', 'At most 100 %');
  });

// ---------------------------------------------------------------- batches

export const FILL_UNITS = ['g', 'mL'] as const;
export type FillUnit = (typeof FILL_UNITS)[number];

/** A calendar date as YYYY-MM-DD that exists, 1900-01-01..2199-12-31 (the shared date schema). */
export const isoDate = calendarDate;

/** Today's date (YYYY-MM-DD) in the given IANA time zone. */
export function todayIn(timeZone: string, now = new Date()): string {
  return new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(now);
}

export const batchInput = z
  .strictObject({
    lotCode: requiredText(40, 'Enter the lot code, e.g. CHC-A-2611').regex(
      /^[A-Za-z0-9][A-Za-z0-9 ._/-]*$/,
      'Letters, digits, spaces and - . / _ only',
    ),
    madeOn: isoDate,
    sizeGrams: z
      .number({ error: 'Enter the batch size in grams' })
      .gt(0, 'Must be more than 0 g')
      .max(MAX_BATCH_GRAMS, `At most ${MAX_BATCH_GRAMS} g`)
      .refine((x) => decimals(x, 2), 'At most 2 decimals'),
    packaging: requiredText(200, 'Describe the pack, e.g. "120 mL PET jar, PP lid"'),
    fillAmount: z
      .number({ error: 'Enter the fill amount as a number' })
      .gt(0, 'Must be more than 0')
      .max(100_000, 'At most 100000')
      .refine((x) => decimals(x, 2), 'At most 2 decimals')
      .nullable()
      .optional(),
    fillUnit: z.enum(FILL_UNITS, { error: 'Choose g or mL' }).nullable().optional(),
    fillingTempC: z.number({ error: 'Enter the filling temperature in °C' }).min(-20, 'At least -20 °C').max(150, 'At most 150 °C').nullable().optional(),
    notes,
  })
  .superRefine((v, ctx) => {
    if (v.fillAmount != null && v.fillUnit == null) ctx.addIssue({ code: 'custom', path: ['fillUnit'], message: 'Choose g or mL' });
    if (v.fillAmount == null && v.fillUnit != null) ctx.addIssue({ code: 'custom', path: ['fillAmount'], message: 'Enter the fill amount' });
  });
export type BatchInput = z.input<typeof batchInput>;

/** A line's raw-material lot and supplier, by the line's position in the batch's formula snapshot. */
export const materialLot = z.strictObject({
  position: z.number().int('Must be a whole number').min(1, 'No such line').max(1000, 'No such line'),
  lot: text().trim().max(60, 'At most 60 characters'),
  supplier: text().trim().max(120, 'At most 120 characters'),
});
export type MaterialLot = z.infer<typeof materialLot>;
/** Every line's lot and supplier at once; a line with neither is left out. */
export const batchLotsInput = z.strictObject({ lots: z.array(materialLot).max(200, 'At most 200 lines') });

// ---------------------------------------------------------------- responses

export interface Product {
  id: number;
  name: string;
  type: ProductType;
  notes: string | null;
  variantCount: number;
  batchCount: number;
  createdAt: string;
  updatedAt: string;
}

export interface Ingredient {
  id: number;
  tradeName: string;
  inciName: string;
  function: IngredientFunction;
  useMinPercent: number | null;
  useMaxPercent: number | null;
  supplier: string | null;
  notes: string | null;
  /** How many variants use it. */
  usedIn: number;
}

export interface VariantSummary {
  id: number;
  productId: number;
  code: string;
  name: string;
  notes: string | null;
  derivedFrom: { id: number; code: string; name: string } | null;
  lineCount: number;
  total: number;
  totalOk: boolean;
  batchCount: number;
  updatedAt: string;
}

export interface FormulaLineView {
  id: number;
  position: number;
  ingredientId: number;
  tradeName: string;
  inciName: string;
  function: IngredientFunction;
  useMinPercent: number | null;
  useMaxPercent: number | null;
  phase: string;
  percent: number;
}

/** A range warning with the index of its line (0-based, as in "lines.N"). */
export type LineWarning = RangeWarning;

export interface VariantDetail {
  variant: VariantSummary;
  product: { id: number; name: string; type: ProductType };
  lines: FormulaLineView[];
  total: FormulaTotal;
  warnings: LineWarning[];
  /** The other variants of the same product, for "compare with". */
  siblings: { id: number; code: string; name: string }[];
}

export interface ScaledLineView {
  position: number;
  tradeName: string;
  inciName: string;
  phase: string;
  percent: number;
  /** Exact grams. */
  grams: number;
  /** Rounded as the bench balance reads: 0.01 g under 10 g, 0.1 g above. */
  benchGrams: number;
}

export interface ScaleResult {
  batchGrams: number;
  benchTotalGrams: number;
  basis: { containers: number; fillGrams: number; overagePercent: number } | null;
  lines: ScaledLineView[];
}

export interface SnapshotLine {
  position: number;
  ingredientId: number;
  tradeName: string;
  inciName: string;
  function: IngredientFunction;
  phase: string;
  percent: number;
}

/** The formula as it was when a batch was made (batches.formula_snapshot). */
export interface FormulaSnapshot {
  takenAt: string;
  product: { id: number; name: string };
  variant: { id: number; code: string; name: string };
  lines: SnapshotLine[];
  total: number;
}

export interface BatchSummary {
  id: number;
  lotCode: string;
  madeOn: string;
  sizeGrams: number;
  packaging: string;
  fillAmount: number | null;
  fillUnit: FillUnit | null;
  /** Filling temperature, °C, where recorded. */
  fillingTempC?: number | null;
  notes: string | null;
  variant: { id: number; code: string; name: string };
  product: { id: number; name: string };
  createdAt: string;
}

export interface BatchDetail {
  batch: BatchSummary & { createdBy: string | null };
  snapshot: FormulaSnapshot;
  /** The snapshot scaled to the batch size. */
  scaled: ScaleResult;
  /** True when the variant's lines differ from the snapshot now. */
  variantChangedSince: boolean;
  /** Raw-material lot and supplier per snapshot line (by position); lines without either are absent. */
  lots: MaterialLot[];
  /** Studies that test this batch. */
  studies: { id: number; title: string; status: StudyStatus; startDate: string }[];
}

export interface CompareRow {
  status: DiffStatus;
  changes: Array<'percent' | 'phase'>;
  percentDelta: number;
  ingredientId: number;
  tradeName: string;
  inciName: string;
  a: { phase: string; percent: number } | null;
  b: { phase: string; percent: number } | null;
}

export interface CompareResult {
  a: VariantSummary;
  b: VariantSummary;
  product: { id: number; name: string; type: ProductType };
  rows: CompareRow[];
  counts: Record<DiffStatus, number>;
}
