/**
 * Formulas: products, the lab's ingredient library, variants with their formula lines, and batches.
 * Reads: any member. Writes: formulators and owners. Every query is scoped to the member's lab;
 * another lab's ids answer 404 exactly like unknown ids. Every change writes one audit row in its
 * own transaction.
 */
import { and, desc, eq } from 'drizzle-orm';
import { Router } from 'express';
import { batchFromContainers, diffVariants, formulaTotal } from '../../shared/compute/formula';
import { ouncesToGrams } from '../../shared/compute/units';
import {
  batchInput,
  batchLotsInput,
  ingredientInput,
  ingredientPatch,
  productInput,
  productPatch,
  scaleQuery,
  todayIn,
  totalProblem,
  useRangeProblem,
  variantCreateInput,
  variantDeriveInput,
  variantSaveInput,
  type BatchDetail,
  type CompareResult,
  type CompareRow,
  type FormulaLineInput,
  type FormulaSnapshot,
} from '../../shared/schemas/formulas';
import { requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db, DbOrTx } from '../db/client';
import { batches, ingredients, products, studies, studyBatches, users, variants } from '../db/schema';
import { HttpError, conflict, idParam, notFound, parse, unprocessable } from '../http/errors';
import { audit } from '../services/audit';
import {
  auditLines,
  batchColumns,
  checkLineIngredients,
  findIngredient,
  findProduct,
  findVariantRow,
  fromJson,
  isDuplicateKey,
  linesDiffer,
  listBatches,
  listIngredients,
  listProducts,
  loadLines,
  nextVariantCode,
  productCodes,
  scaleLines,
  takeSnapshot,
  toBatch,
  variantDetail,
  variantSummaries,
  writeLines,
} from '../services/formulas';

const read = requireRole('technician');
const write = requireRole('formulator');

/** 422 when the lines do not sum to 100.00 % within 0.01 %. */
function requireHundred(lines: FormulaLineInput[]) {
  const problem = totalProblem(formulaTotal(lines));
  if (problem) throw unprocessable(problem, { lines: problem });
}

async function requireFreeCode(db: DbOrTx, labId: number, productId: number, code: string, exceptId?: number) {
  const [clash] = await db
    .select({ id: variants.id })
    .from(variants)
    .where(and(eq(variants.labId, labId), eq(variants.productId, productId), eq(variants.code, code)))
    .limit(1);
  if (clash && clash.id !== exceptId) throw conflict(`This product already has a variant ${code}`, { code: `Variant ${code} already exists; choose another code` });
}

/** Turns a duplicate-key error on a known unique index into a 409 naming the field. */
function duplicateAs(err: unknown, index: string, field: string, message: string): never {
  if (isDuplicateKey(err, index)) throw conflict(message, { [field]: message });
  throw err;
}

const codeTaken = (e: unknown) => duplicateAs(e, 'variants_product_code_uq', 'code', 'Another variant of this product already has this code');

/** Mounted at /api. Guards sit on each route: this router sees every /api request. */
export function formulaRoutes(db: Db): Router {
  const r = Router();

  // ------------------------------------------------------------ products

  r.get('/products', read, async (req, res) => {
    res.json({ products: await listProducts(db, member(req).labId) });
  });

  r.post('/products', write, async (req, res) => {
    const me = member(req);
    const input = parse(productInput, req.body);
    const dupMessage = `A product named "${input.name}" already exists`;
    const product = await db
      .transaction(async (tx) => {
        const [{ id }] = await tx
          .insert(products)
          .values({ labId: me.labId, name: input.name, type: input.type, notes: input.notes ?? null, createdBy: me.id })
          .$returningId();
        await audit(tx, { labId: me.labId, userId: me.id, action: 'create', entity: 'product', entityId: id, newValue: { name: input.name, type: input.type, notes: input.notes ?? null } });
        return findProduct(tx, me.labId, id);
      })
      .catch((e) => duplicateAs(e, 'products_lab_name_uq', 'name', dupMessage));
    res.status(201).json({ product });
  });

  r.get('/products/:id', read, async (req, res) => {
    const me = member(req);
    const product = await findProduct(db, me.labId, idParam(req.params.id));
    const [variantList, batchList, codes] = await Promise.all([
      variantSummaries(db, me.labId, eq(variants.productId, product.id)),
      listBatches(db, me.labId, eq(variants.productId, product.id)),
      productCodes(db, me.labId, product.id),
    ]);
    res.json({ product, variants: variantList, batches: batchList, nextCode: nextVariantCode(codes) });
  });

  r.patch('/products/:id', write, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(productPatch, req.body);
    const product = await db
      .transaction(async (tx) => {
        const before = await findProduct(tx, me.labId, id, true);
        const change: Record<string, unknown> = {};
        const old: Record<string, unknown> = {};
        for (const key of ['name', 'type', 'notes'] as const) {
          if (input[key] !== undefined && input[key] !== before[key]) {
            change[key] = input[key];
            old[key] = before[key];
          }
        }
        if (!Object.keys(change).length) return before;
        await tx.update(products).set(change).where(and(eq(products.labId, me.labId), eq(products.id, id)));
        await audit(tx, { labId: me.labId, userId: me.id, action: 'update', entity: 'product', entityId: id, oldValue: old, newValue: change });
        return findProduct(tx, me.labId, id);
      })
      .catch((e) => duplicateAs(e, 'products_lab_name_uq', 'name', `A product named "${input.name}" already exists`));
    res.json({ product });
  });

  // ------------------------------------------------------------ ingredients

  r.get('/ingredients', read, async (req, res) => {
    res.json({ ingredients: await listIngredients(db, member(req).labId) });
  });

  r.get('/ingredients/:id', read, async (req, res) => {
    const me = member(req);
    res.json({ ingredient: await findIngredient(db, me.labId, idParam(req.params.id)) });
  });

  r.post('/ingredients', write, async (req, res) => {
    const me = member(req);
    const input = parse(ingredientInput, req.body);
    const values = {
      tradeName: input.tradeName,
      inciName: input.inciName,
      function: input.function,
      useMinPercent: input.useMinPercent ?? null,
      useMaxPercent: input.useMaxPercent ?? null,
      supplier: input.supplier ?? null,
      notes: input.notes ?? null,
    };
    const ingredient = await db
      .transaction(async (tx) => {
        const [{ id }] = await tx.insert(ingredients).values({ labId: me.labId, ...values }).$returningId();
        await audit(tx, { labId: me.labId, userId: me.id, action: 'create', entity: 'ingredient', entityId: id, newValue: values });
        return findIngredient(tx, me.labId, id);
      })
      .catch((e) => duplicateAs(e, 'ingredients_lab_trade_uq', 'tradeName', `"${input.tradeName}" is already in your library`));
    res.status(201).json({ ingredient });
  });

  r.patch('/ingredients/:id', write, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(ingredientPatch, req.body);
    const ingredient = await db
      .transaction(async (tx) => {
        const before = await findIngredient(tx, me.labId, id, true);
        const min = input.useMinPercent !== undefined ? input.useMinPercent : before.useMinPercent;
        const max = input.useMaxPercent !== undefined ? input.useMaxPercent : before.useMaxPercent;
        const problem = useRangeProblem(min, max);
        if (problem) throw new HttpError(400, 'validation', 'Invalid body: check useMaxPercent', { useMaxPercent: problem });
        const change: Record<string, unknown> = {};
        const old: Record<string, unknown> = {};
        for (const key of ['tradeName', 'inciName', 'function', 'useMinPercent', 'useMaxPercent', 'supplier', 'notes'] as const) {
          if (input[key] !== undefined && input[key] !== before[key]) {
            change[key] = input[key];
            old[key] = before[key];
          }
        }
        if (!Object.keys(change).length) return before;
        await tx.update(ingredients).set(change).where(and(eq(ingredients.labId, me.labId), eq(ingredients.id, id)));
        await audit(tx, { labId: me.labId, userId: me.id, action: 'update', entity: 'ingredient', entityId: id, oldValue: old, newValue: change });
        return findIngredient(tx, me.labId, id);
      })
      .catch((e) => duplicateAs(e, 'ingredients_lab_trade_uq', 'tradeName', `"${input.tradeName}" is already in your library`));
    res.json({ ingredient });
  });

  // ------------------------------------------------------------ variants

  r.get('/products/:id/variants', read, async (req, res) => {
    const me = member(req);
    const product = await findProduct(db, me.labId, idParam(req.params.id));
    const [list, codes] = await Promise.all([
      variantSummaries(db, me.labId, eq(variants.productId, product.id)),
      productCodes(db, me.labId, product.id),
    ]);
    res.json({ variants: list, nextCode: nextVariantCode(codes) });
  });

  r.post('/products/:id/variants', write, async (req, res) => {
    const me = member(req);
    const productId = idParam(req.params.id);
    const input = parse(variantCreateInput, req.body);
    const lines = input.lines ?? [];
    const id = await db.transaction(async (tx) => {
      await findProduct(tx, me.labId, productId, true);
      if (lines.length) {
        await checkLineIngredients(tx, me.labId, lines);
        requireHundred(lines);
      }
      const code = input.code ?? nextVariantCode(await productCodes(tx, me.labId, productId));
      await requireFreeCode(tx, me.labId, productId, code);
      const [{ id }] = await tx
        .insert(variants)
        .values({ labId: me.labId, productId, code, name: input.name, notes: input.notes ?? null, createdBy: me.id })
        .$returningId();
      await writeLines(tx, me.labId, id, lines);
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'create',
        entity: 'variant',
        entityId: id,
        newValue: { productId, code, name: input.name, notes: input.notes ?? null, lines: auditLines(lines) },
      });
      return id;
    }).catch(codeTaken);
    res.status(201).json(await variantDetail(db, me.labId, id));
  });

  r.get('/variants/:id', read, async (req, res) => {
    const me = member(req);
    res.json(await variantDetail(db, me.labId, idParam(req.params.id)));
  });

  /** Replaces the header and every line in one transaction; range warnings come back, they do not block. */
  r.put('/variants/:id', write, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(variantSaveInput, req.body);
    await db.transaction(async (tx) => {
      const before = await findVariantRow(tx, me.labId, id, true);
      await checkLineIngredients(tx, me.labId, input.lines);
      requireHundred(input.lines);
      if (input.code !== before.code) await requireFreeCode(tx, me.labId, before.productId, input.code, id);
      const oldLines = auditLines(await loadLines(tx, me.labId, id));
      const newLines = auditLines(input.lines);
      const notes = input.notes ?? null;
      const headerSame = input.code === before.code && input.name === before.name && notes === before.notes;
      const linesSame = JSON.stringify(oldLines) === JSON.stringify(newLines);
      if (headerSame && linesSame) return;
      await tx
        .update(variants)
        .set({ code: input.code, name: input.name, notes, updatedAt: new Date() })
        .where(and(eq(variants.labId, me.labId), eq(variants.id, id)));
      if (!linesSame) await writeLines(tx, me.labId, id, input.lines);
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'variant',
        entityId: id,
        oldValue: { code: before.code, name: before.name, notes: before.notes, lines: oldLines },
        newValue: { code: input.code, name: input.name, notes, lines: newLines },
      });
    }).catch(codeTaken);
    res.json(await variantDetail(db, me.labId, id));
  });

  /** Copies a variant and its lines under a new code; the copy remembers where it came from. */
  r.post('/variants/:id/derive', write, async (req, res) => {
    const me = member(req);
    const sourceId = idParam(req.params.id);
    const input = parse(variantDeriveInput, req.body ?? {});
    const id = await db.transaction(async (tx) => {
      const source = await findVariantRow(tx, me.labId, sourceId);
      await findProduct(tx, me.labId, source.productId, true);
      const lines = await loadLines(tx, me.labId, sourceId);
      const code = input.code ?? nextVariantCode(await productCodes(tx, me.labId, source.productId));
      await requireFreeCode(tx, me.labId, source.productId, code);
      const name = input.name ?? `${source.name} (copy of ${source.code})`.slice(0, 160);
      const [{ id }] = await tx
        .insert(variants)
        .values({ labId: me.labId, productId: source.productId, code, name, notes: source.notes, derivedFromId: source.id, createdBy: me.id })
        .$returningId();
      await writeLines(tx, me.labId, id, lines);
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'create',
        entity: 'variant',
        entityId: id,
        newValue: { productId: source.productId, code, name, derivedFromId: source.id, lines: auditLines(lines) },
      });
      return id;
    }).catch(codeTaken);
    res.status(201).json(await variantDetail(db, me.labId, id));
  });

  r.get('/variants/:id/compare/:otherId', read, async (req, res) => {
    const me = member(req);
    const aId = idParam(req.params.id);
    const bId = idParam(req.params.otherId);
    const [a] = await variantSummaries(db, me.labId, eq(variants.id, aId));
    const [b] = await variantSummaries(db, me.labId, eq(variants.id, bId));
    if (!a || !b) throw notFound('No such variant in your lab');
    if (a.productId !== b.productId) throw unprocessable('Only variants of the same product can be compared');
    const product = await findProduct(db, me.labId, a.productId);
    const [aLines, bLines] = await Promise.all([loadLines(db, me.labId, aId), loadLines(db, me.labId, bId)]);
    const diff = diffVariants(aLines, bLines);
    const rows: CompareRow[] = diff.rows.map((row) => {
      const line = row.a ?? row.b!;
      return {
        status: row.status,
        changes: row.changes,
        percentDelta: row.percentDelta,
        ingredientId: line.ingredientId,
        tradeName: line.tradeName,
        inciName: line.inciName,
        a: row.a ? { phase: row.a.phase, percent: row.a.percent } : null,
        b: row.b ? { phase: row.b.phase, percent: row.b.percent } : null,
      };
    });
    const out: CompareResult = { a, b, product: { id: product.id, name: product.name, type: product.type }, rows, counts: diff.counts };
    res.json(out);
  });

  /** Grams per line for a batch: ?batchGrams=, or ?containers=&fillGrams= (or fillOunces=)&overagePercent=. */
  r.get('/variants/:id/scale', read, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const q = parse(scaleQuery, req.query, 'query');
    await findVariantRow(db, me.labId, id);
    const lines = await loadLines(db, me.labId, id);
    if (!lines.length) throw unprocessable('This variant has no formula lines yet');
    let batchGrams: number;
    let basis = null;
    if (q.batchGrams != null) batchGrams = q.batchGrams;
    else {
      const fillGrams = q.fillGrams ?? ouncesToGrams(q.fillOunces!);
      const overagePercent = q.overagePercent ?? 0;
      basis = { containers: q.containers!, fillGrams, overagePercent };
      batchGrams = batchFromContainers(basis);
    }
    res.json(scaleLines(lines, batchGrams, basis));
  });

  // ------------------------------------------------------------ batches

  r.get('/variants/:id/batches', read, async (req, res) => {
    const me = member(req);
    const v = await findVariantRow(db, me.labId, idParam(req.params.id));
    res.json({ batches: await listBatches(db, me.labId, eq(batches.variantId, v.id)) });
  });

  /** Records a made batch; its formula is frozen as a snapshot of the variant's lines now. */
  r.post('/variants/:id/batches', write, async (req, res) => {
    const me = member(req);
    const variantId = idParam(req.params.id);
    const input = parse(batchInput, req.body);
    if (input.madeOn > todayIn(me.lab.timeZone)) {
      throw new HttpError(400, 'validation', 'Invalid body: check madeOn', { madeOn: 'The date made cannot be in the future' });
    }
    const dupMessage = `Lot code ${input.lotCode} is already used in your lab`;
    const id = await db
      .transaction(async (tx) => {
        await findVariantRow(tx, me.labId, variantId, true);
        const snapshot = await takeSnapshot(tx, me.labId, variantId);
        if (!snapshot.lines.length) throw unprocessable('This variant has no formula lines yet: enter and save its lines first');
        const [clash] = await tx
          .select({ id: batches.id })
          .from(batches)
          .where(and(eq(batches.labId, me.labId), eq(batches.lotCode, input.lotCode)))
          .limit(1);
        if (clash) throw conflict(dupMessage, { lotCode: dupMessage });
        const values = {
          lotCode: input.lotCode,
          madeOn: input.madeOn,
          sizeGrams: input.sizeGrams,
          packaging: input.packaging,
          fillAmount: input.fillAmount ?? null,
          fillUnit: input.fillUnit ?? null,
          fillingTempC: input.fillingTempC ?? null,
          notes: input.notes ?? null,
        };
        const [{ id }] = await tx
          .insert(batches)
          .values({ labId: me.labId, variantId, ...values, formulaSnapshot: snapshot, createdBy: me.id })
          .$returningId();
        await audit(tx, { labId: me.labId, userId: me.id, action: 'create', entity: 'batch', entityId: id, newValue: { variantId, ...values } });
        return id;
      })
      .catch((e) => duplicateAs(e, 'batches_lab_lot_uq', 'lotCode', dupMessage));
    res.status(201).json(await batchDetail(db, me.labId, id));
  });

  r.get('/batches', read, async (req, res) => {
    res.json({ batches: await listBatches(db, member(req).labId) });
  });

  r.get('/batches/:id', read, async (req, res) => {
    const me = member(req);
    res.json(await batchDetail(db, me.labId, idParam(req.params.id)));
  });

  /** Records the raw-material lot and supplier of each line of the batch's formula (replaces the list; audited). */
  r.put('/batches/:id/lots', write, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const { lots } = parse(batchLotsInput, req.body);
    await db.transaction(async (tx) => {
      const [row] = await tx
        .select({ snapshot: batches.formulaSnapshot, lots: batches.materialLots })
        .from(batches)
        .where(and(eq(batches.labId, me.labId), eq(batches.id, id)))
        .for('update');
      if (!row) throw notFound('No such batch in your lab');
      const positions = new Set((fromJson<FormulaSnapshot>(row.snapshot)?.lines ?? []).map((l) => l.position));
      const fields: Record<string, string> = {};
      lots.forEach((l, i) => {
        if (!positions.has(l.position)) fields[`lots.${i}.position`] = 'No such line in this batch’s formula';
        else if (lots.findIndex((x) => x.position === l.position) !== i) fields[`lots.${i}.position`] = 'Listed twice';
      });
      if (Object.keys(fields).length) throw new HttpError(400, 'validation', `Invalid body: check ${Object.keys(fields).join(', ')}`, fields);
      const kept = lots.filter((l) => l.lot || l.supplier).sort((a, b) => a.position - b.position);
      await tx.update(batches).set({ materialLots: kept }).where(eq(batches.id, id));
      await audit(tx, { labId: me.labId, userId: me.id, action: 'update', entity: 'batch', entityId: id, oldValue: { materialLots: row.lots ?? [] }, newValue: { materialLots: kept } });
    });
    res.json(await batchDetail(db, me.labId, id));
  });

  return r;
}

async function batchDetail(db: DbOrTx, labId: number, id: number): Promise<BatchDetail> {
  const [row] = await db
    .select({ ...batchColumns, snapshot: batches.formulaSnapshot, lots: batches.materialLots, createdBy: users.name })
    .from(batches)
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .innerJoin(products, eq(products.id, variants.productId))
    .leftJoin(users, eq(users.id, batches.createdBy))
    .where(and(eq(batches.labId, labId), eq(batches.id, id)))
    .limit(1);
  if (!row) throw notFound('No such batch in your lab');
  const snapshot = fromJson<FormulaSnapshot>(row.snapshot);
  // A lot recorded without its formula (imported or very old) has no lines to scale; say so rather than fail.
  if (!Array.isArray(snapshot?.lines)) throw conflict('No formula snapshot was recorded for this lot, so its formula cannot be shown');
  const batch = { ...toBatch(row), createdBy: row.createdBy };
  const current = await loadLines(db, labId, row.variantId);
  const used = await db
    .select({ id: studies.id, title: studies.title, status: studies.status, startDate: studies.startDate })
    .from(studyBatches)
    .innerJoin(studies, eq(studies.id, studyBatches.studyId))
    .where(and(eq(studyBatches.labId, labId), eq(studyBatches.batchId, id)))
    .orderBy(desc(studies.startDate), desc(studies.id));
  return {
    batch,
    snapshot,
    scaled: scaleLines(snapshot.lines, batch.sizeGrams),
    variantChangedSince: linesDiffer(current, snapshot.lines),
    lots: fromJson<{ position: number; lot: string; supplier: string }[]>(row.lots) ?? [],
    studies: used.map((s) => ({ ...s, startDate: String(s.startDate).slice(0, 10) })),
  };
}
