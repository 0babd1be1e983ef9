/**
 * Data access for the Formulas area. Every function takes the member's lab id and filters on it:
 * another lab's ids are reported exactly like unknown ids.
 */
import { and, asc, desc, eq, inArray, sql, type SQL } from 'drizzle-orm';
import { formulaTotal, rangeWarnings, scaleFormula } from '../../shared/compute/formula';
import type {
  BatchSummary,
  FormulaLineInput,
  FormulaLineView,
  FormulaSnapshot,
  Ingredient,
  Product,
  ScaleResult,
  SnapshotLine,
  VariantDetail,
  VariantSummary,
} from '../../shared/schemas/formulas';
import { alias } from 'drizzle-orm/mysql-core';
import type { DbOrTx } from '../db/client';
import { batches, formulaLines, ingredients, products, variants } from '../db/schema';
import { HttpError, notFound } from '../http/errors';

const iso = (d: Date | string) => (d instanceof Date ? d : new Date(d)).toISOString();

/** JSON columns are LONGTEXT on MariaDB: parse when the driver hands back a string. */
export function fromJson<T>(value: unknown): T {
  return (typeof value === 'string' ? JSON.parse(value) : value) as T;
}

/** True when the error (or its cause) is a duplicate-key error, optionally on the given unique index. */
export function isDuplicateKey(err: unknown, index?: string): boolean {
  let e = err as { errno?: number; sqlMessage?: string; message?: string; cause?: unknown } | undefined;
  for (let depth = 0; e && depth < 5; depth++) {
    if (e.errno === 1062) return index ? String(e.sqlMessage ?? e.message ?? '').includes(index) : true;
    e = e.cause as typeof e;
  }
  return false;
}

// ---------------------------------------------------------------- products

const productColumns = {
  id: products.id,
  name: products.name,
  type: products.type,
  notes: products.notes,
  createdAt: products.createdAt,
  updatedAt: products.updatedAt,
  variantCount: sql<number>`(select count(*) from variants v where v.product_id = products.id)`,
  batchCount: sql<number>`(select count(*) from batches b join variants v on v.id = b.variant_id where v.product_id = products.id)`,
};

type ProductRow = { [K in keyof typeof productColumns]: unknown } & {
  id: number;
  name: string;
  type: Product['type'];
  notes: string | null;
  createdAt: Date;
  updatedAt: Date;
};

function toProduct(r: ProductRow): Product {
  return {
    id: r.id,
    name: r.name,
    type: r.type,
    notes: r.notes,
    variantCount: Number(r.variantCount),
    batchCount: Number(r.batchCount),
    createdAt: iso(r.createdAt),
    updatedAt: iso(r.updatedAt),
  };
}

export async function listProducts(db: DbOrTx, labId: number): Promise<Product[]> {
  const rows = await db.select(productColumns).from(products).where(eq(products.labId, labId)).orderBy(asc(products.name));
  return rows.map(toProduct);
}

export async function findProduct(db: DbOrTx, labId: number, id: number, lock = false): Promise<Product> {
  const q = db.select(productColumns).from(products).where(and(eq(products.labId, labId), eq(products.id, id))).limit(1);
  const [row] = lock ? await q.for('update') : await q;
  if (!row) throw notFound('No such product in your lab');
  return toProduct(row);
}

// ---------------------------------------------------------------- ingredients

const ingredientColumns = {
  id: ingredients.id,
  tradeName: ingredients.tradeName,
  inciName: ingredients.inciName,
  function: ingredients.function,
  useMinPercent: ingredients.useMinPercent,
  useMaxPercent: ingredients.useMaxPercent,
  supplier: ingredients.supplier,
  notes: ingredients.notes,
  usedIn: sql<number>`(select count(distinct fl.variant_id) from formula_lines fl where fl.ingredient_id = ingredients.id)`,
};

function toIngredient(r: Omit<Ingredient, 'usedIn'> & { usedIn: unknown }): Ingredient {
  return {
    ...r,
    useMinPercent: r.useMinPercent == null ? null : Number(r.useMinPercent),
    useMaxPercent: r.useMaxPercent == null ? null : Number(r.useMaxPercent),
    usedIn: Number(r.usedIn),
  };
}

export async function listIngredients(db: DbOrTx, labId: number): Promise<Ingredient[]> {
  const rows = await db.select(ingredientColumns).from(ingredients).where(eq(ingredients.labId, labId)).orderBy(asc(ingredients.tradeName));
  return rows.map(toIngredient);
}

export async function findIngredient(db: DbOrTx, labId: number, id: number, lock = false): Promise<Ingredient> {
  const q = db.select(ingredientColumns).from(ingredients).where(and(eq(ingredients.labId, labId), eq(ingredients.id, id))).limit(1);
  const [row] = lock ? await q.for('update') : await q;
  if (!row) throw notFound('No such ingredient in your lab');
  return toIngredient(row);
}

/**
 * Checks that every line's ingredient is in the lab's library. An unknown id and another
 * lab's id get the same answer: 400 naming the line ("lines.2.ingredientId").
 */
export async function checkLineIngredients(db: DbOrTx, labId: number, lines: FormulaLineInput[]) {
  const ids = [...new Set(lines.map((l) => l.ingredientId))];
  const found = ids.length
    ? await db
        .select({
          id: ingredients.id,
          tradeName: ingredients.tradeName,
          useMinPercent: ingredients.useMinPercent,
          useMaxPercent: ingredients.useMaxPercent,
        })
        .from(ingredients)
        .where(and(eq(ingredients.labId, labId), inArray(ingredients.id, ids)))
    : [];
  const byId = new Map(found.map((r) => [r.id, r]));
  const fields: Record<string, string> = {};
  lines.forEach((l, i) => {
    if (!byId.has(l.ingredientId)) fields[`lines.${i}.ingredientId`] = `Line ${i + 1}: no such ingredient in your lab's library`;
  });
  if (Object.keys(fields).length) {
    throw new HttpError(400, 'validation', `Invalid body: check ${Object.keys(fields).join(', ')}`, fields);
  }
  return byId;
}

// ---------------------------------------------------------------- variants

const variantColumns = {
  id: variants.id,
  productId: variants.productId,
  code: variants.code,
  name: variants.name,
  notes: variants.notes,
  derivedFromId: variants.derivedFromId,
  updatedAt: variants.updatedAt,
};

/** One variant of the lab, or 404. */
export async function findVariantRow(db: DbOrTx, labId: number, id: number, lock = false) {
  const q = db.select(variantColumns).from(variants).where(and(eq(variants.labId, labId), eq(variants.id, id))).limit(1);
  const [row] = lock ? await q.for('update') : await q;
  if (!row) throw notFound('No such variant in your lab');
  return row;
}

/** The lines of one variant, in order, with their ingredients. */
export async function loadLines(db: DbOrTx, labId: number, variantId: number): Promise<FormulaLineView[]> {
  const rows = await db
    .select({
      id: formulaLines.id,
      position: formulaLines.position,
      ingredientId: formulaLines.ingredientId,
      tradeName: ingredients.tradeName,
      inciName: ingredients.inciName,
      function: ingredients.function,
      useMinPercent: ingredients.useMinPercent,
      useMaxPercent: ingredients.useMaxPercent,
      phase: formulaLines.phase,
      percent: formulaLines.percent,
    })
    .from(formulaLines)
    .innerJoin(ingredients, eq(ingredients.id, formulaLines.ingredientId))
    .where(and(eq(formulaLines.labId, labId), eq(formulaLines.variantId, variantId)))
    .orderBy(asc(formulaLines.position), asc(formulaLines.id));
  return rows.map((r) => ({
    ...r,
    percent: Number(r.percent),
    useMinPercent: r.useMinPercent == null ? null : Number(r.useMinPercent),
    useMaxPercent: r.useMaxPercent == null ? null : Number(r.useMaxPercent),
  }));
}

/** Replaces a variant's lines (call inside a transaction). */
export async function writeLines(tx: DbOrTx, labId: number, variantId: number, lines: FormulaLineInput[]) {
  await tx.delete(formulaLines).where(and(eq(formulaLines.labId, labId), eq(formulaLines.variantId, variantId)));
  if (lines.length) {
    await tx.insert(formulaLines).values(
      lines.map((l, i) => ({ labId, variantId, position: i + 1, ingredientId: l.ingredientId, phase: l.phase, percent: l.percent })),
    );
  }
}

/** The lines as the audit trail stores them. */
export const auditLines = (lines: ReadonlyArray<{ ingredientId: number; phase: string; percent: number }>) =>
  lines.map((l) => ({ ingredientId: l.ingredientId, phase: l.phase, percent: l.percent }));

/** Summaries of the lab's variants matching `where` (product, ids...). */
export async function variantSummaries(db: DbOrTx, labId: number, where?: SQL): Promise<VariantSummary[]> {
  const parent = alias(variants, 'parent');
  const rows = await db
    .select({
      ...variantColumns,
      parentCode: parent.code,
      parentName: parent.name,
      batchCount: sql<number>`(select count(*) from batches b where b.variant_id = variants.id)`,
    })
    .from(variants)
    .leftJoin(parent, and(eq(parent.id, variants.derivedFromId), eq(parent.labId, variants.labId)))
    .where(where ? and(eq(variants.labId, labId), where) : eq(variants.labId, labId))
    .orderBy(asc(variants.code), asc(variants.id));
  if (!rows.length) return [];
  const lineRows = await db
    .select({ variantId: formulaLines.variantId, percent: formulaLines.percent })
    .from(formulaLines)
    .where(and(eq(formulaLines.labId, labId), inArray(formulaLines.variantId, rows.map((r) => r.id))));
  const byVariant = new Map<number, { percent: number }[]>();
  for (const l of lineRows) {
    const list = byVariant.get(l.variantId) ?? [];
    list.push({ percent: Number(l.percent) });
    byVariant.set(l.variantId, list);
  }
  return rows.map((r) => {
    const lines = byVariant.get(r.id) ?? [];
    const t = formulaTotal(lines);
    return {
      id: r.id,
      productId: r.productId,
      code: r.code,
      name: r.name,
      notes: r.notes,
      derivedFrom: r.derivedFromId != null && r.parentCode != null ? { id: r.derivedFromId, code: r.parentCode, name: r.parentName ?? '' } : null,
      lineCount: lines.length,
      total: t.total,
      totalOk: lines.length > 0 && t.ok,
      batchCount: Number(r.batchCount),
      updatedAt: iso(r.updatedAt),
    };
  });
}

/** Range warnings of a variant's lines; each carries the line's index. */
export function lineWarnings(lines: ReadonlyArray<{ tradeName: string; percent: number; useMinPercent: number | null; useMaxPercent: number | null }>) {
  return rangeWarnings(lines.map((l) => ({ ingredientName: l.tradeName, percent: l.percent, useMin: l.useMinPercent, useMax: l.useMaxPercent })));
}

export async function variantDetail(db: DbOrTx, labId: number, id: number): Promise<VariantDetail> {
  const [summary] = await variantSummaries(db, labId, eq(variants.id, id));
  if (!summary) throw notFound('No such variant in your lab');
  const product = await findProduct(db, labId, summary.productId);
  const lines = await loadLines(db, labId, id);
  const siblings = await db
    .select({ id: variants.id, code: variants.code, name: variants.name })
    .from(variants)
    .where(and(eq(variants.labId, labId), eq(variants.productId, summary.productId)))
    .orderBy(asc(variants.code));
  return {
    variant: summary,
    product: { id: product.id, name: product.name, type: product.type },
    lines,
    total: formulaTotal(lines),
    warnings: lineWarnings(lines),
    siblings: siblings.filter((s) => s.id !== id),
  };
}

/**
 * The next free code after the product's highest single letter: A, B, C... then AA, AB...
 * (common lab habit of lettering trial variants; our own rule).
 */
export function nextVariantCode(codes: readonly string[]): string {
  const used = new Set(codes.map((c) => c.toUpperCase()));
  const letters = [...used].filter((c) => /^[A-Z]$/.test(c)).sort();
  const start = letters.length ? letters[letters.length - 1].charCodeAt(0) - 64 : 0; // 0 = none, 1 = A
  for (let i = start; i < 26; i++) {
    const c = String.fromCharCode(65 + i);
    if (!used.has(c)) return c;
  }
  for (let i = 0; i < 26; i++) {
    const c = String.fromCharCode(65 + i);
    if (!used.has(c)) return c;
  }
  for (let i = 0; i < 26 * 26; i++) {
    const c = String.fromCharCode(65 + Math.floor(i / 26)) + String.fromCharCode(65 + (i % 26));
    if (!used.has(c)) return c;
  }
  return `V${used.size + 1}`;
}

export async function productCodes(db: DbOrTx, labId: number, productId: number): Promise<string[]> {
  const rows = await db
    .select({ code: variants.code })
    .from(variants)
    .where(and(eq(variants.labId, labId), eq(variants.productId, productId)));
  return rows.map((r) => r.code);
}

// ---------------------------------------------------------------- scaling and snapshots

export function scaleLines(
  lines: ReadonlyArray<{ position: number; tradeName: string; inciName: string; phase: string; percent: number }>,
  batchGrams: number,
  basis: ScaleResult['basis'] = null,
): ScaleResult {
  const scaled = scaleFormula(
    lines.map((l) => ({ position: l.position, tradeName: l.tradeName, inciName: l.inciName, phase: l.phase, percent: l.percent })),
    batchGrams,
  );
  return { batchGrams, benchTotalGrams: scaled.benchTotalGrams, basis, lines: scaled.lines };
}

/** The variant's formula as it is now, to store with a batch. */
export async function takeSnapshot(db: DbOrTx, labId: number, variantId: number, now = new Date()): Promise<FormulaSnapshot> {
  const v = await findVariantRow(db, labId, variantId);
  const product = await findProduct(db, labId, v.productId);
  const lines = await loadLines(db, labId, variantId);
  const snapLines: SnapshotLine[] = lines.map((l, i) => ({
    position: i + 1,
    ingredientId: l.ingredientId,
    tradeName: l.tradeName,
    inciName: l.inciName,
    function: l.function,
    phase: l.phase,
    percent: l.percent,
  }));
  return {
    takenAt: now.toISOString(),
    product: { id: product.id, name: product.name },
    variant: { id: v.id, code: v.code, name: v.name },
    lines: snapLines,
    total: formulaTotal(lines).total,
  };
}

// ---------------------------------------------------------------- batches

export const batchColumns = {
  id: batches.id,
  lotCode: batches.lotCode,
  madeOn: batches.madeOn,
  sizeGrams: batches.sizeGrams,
  packaging: batches.packaging,
  fillAmount: batches.fillAmount,
  fillUnit: batches.fillUnit,
  fillingTempC: batches.fillingTempC,
  notes: batches.notes,
  createdAt: batches.createdAt,
  variantId: variants.id,
  variantCode: variants.code,
  variantName: variants.name,
  productId: products.id,
  productName: products.name,
};

type BatchRow = {
  id: number;
  lotCode: string;
  madeOn: string;
  sizeGrams: number;
  packaging: string;
  fillAmount: number | null;
  fillUnit: 'g' | 'mL' | null;
  fillingTempC?: number | null;
  notes: string | null;
  createdAt: Date;
  variantId: number;
  variantCode: string;
  variantName: string;
  productId: number;
  productName: string;
};

export function toBatch(r: BatchRow): BatchSummary {
  return {
    id: r.id,
    lotCode: r.lotCode,
    madeOn: String(r.madeOn).slice(0, 10),
    sizeGrams: Number(r.sizeGrams),
    packaging: r.packaging,
    fillAmount: r.fillAmount == null ? null : Number(r.fillAmount),
    fillUnit: r.fillUnit,
    fillingTempC: r.fillingTempC == null ? null : Number(r.fillingTempC),
    notes: r.notes,
    variant: { id: r.variantId, code: r.variantCode, name: r.variantName },
    product: { id: r.productId, name: r.productName },
    createdAt: iso(r.createdAt),
  };
}

export async function listBatches(db: DbOrTx, labId: number, where?: SQL): Promise<BatchSummary[]> {
  const rows = await db
    .select(batchColumns)
    .from(batches)
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .innerJoin(products, eq(products.id, variants.productId))
    .where(where ? and(eq(batches.labId, labId), where) : eq(batches.labId, labId))
    .orderBy(desc(batches.madeOn), desc(batches.id));
  return rows.map(toBatch);
}

/** True when the variant's current lines differ from a snapshot's (ingredient, phase, % and order). */
export function linesDiffer(now: ReadonlyArray<{ ingredientId: number; phase: string; percent: number }>, then: ReadonlyArray<SnapshotLine>) {
  if (now.length !== then.length) return true;
  return now.some((l, i) => l.ingredientId !== then[i].ingredientId || l.phase !== then[i].phase || l.percent !== then[i].percent);
}
