import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { auditLog, batches, formulaLines, products } from '../../server/db/schema';
import { DEMO_INGREDIENTS, seedFormulas, type SeededFormulas } from '../../server/demo/formulas';
import { todayIn } from '../../shared/schemas/formulas';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let demo: SeededFormulas;
let otherLabIngredientId: number;

interface Line {
  ingredientId: number;
  phase: string;
  percent: number;
}

/** Loads the demo formulas unless the demo seed already did; either way returns their ids. */
async function ensureDemoFormulas(): Promise<SeededFormulas> {
  const lab = t.labs[0];
  const res = await owner.get('/api/products');
  if (!res.body.products?.length) return t.db.transaction((tx) => seedFormulas(tx, lab.id, lab.members[DEMO.formulator]));
  const byName = Object.fromEntries(res.body.products.map((p: { name: string; id: number }) => [p.name, p.id]));
  const handCream = byName['Calendula hand cream'];
  const bodyButter = byName['Shea whipped body butter'];
  const codes = async (productId: number) =>
    Object.fromEntries((await owner.get(`/api/products/${productId}/variants`)).body.variants.map((v: { code: string; id: number }) => [v.code, v.id]));
  const [cream, butter] = [await codes(handCream), await codes(bodyButter)];
  const library = (await owner.get('/api/ingredients')).body.ingredients as { tradeName: string; id: number }[];
  const ingredientIds = Object.fromEntries(DEMO_INGREDIENTS.map((d) => [d.key, library.find((i) => i.tradeName === d.tradeName)!.id]));
  const made = ((await owner.get('/api/batches')).body.batches as { id: number; lotCode: string }[]).sort((a, b) => a.id - b.id);
  return {
    ingredients: ingredientIds,
    products: { handCream, bodyButter },
    variants: { handCreamA: cream.A, handCreamB: cream.B, bodyButterA: butter.A },
    batches: made.map((b) => b.id),
    lotCodes: made.map((b) => b.lotCode),
  };
}

async function linesOf(variantId: number): Promise<Line[]> {
  const res = await owner.get(`/api/variants/${variantId}`);
  expect(res.status).toBe(200);
  return res.body.lines.map((l: Line) => ({ ingredientId: l.ingredientId, phase: l.phase, percent: l.percent }));
}

async function auditRows(entity: string, entityId: number | string) {
  return t.db
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, entity), eq(auditLog.entityId, String(entityId))));
}

const parseJson = <T>(v: unknown): T => (typeof v === 'string' ? JSON.parse(v) : v) as T;

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
  demo = await ensureDemoFormulas();
  const other = await otherOwner.post('/api/ingredients', { tradeName: 'Copperbeech glycerin', inciName: 'Glycerin', function: 'humectant' });
  expect(other.status).toBe(201);
  otherLabIngredientId = other.body.ingredient.id;
});
afterAll(async () => t?.close());

describe('demo formulas', () => {
  it('loads two products whose variants each sum to exactly 100 %', async () => {
    const res = await technician.get('/api/products');
    expect(res.status).toBe(200);
    const byName = Object.fromEntries(res.body.products.map((p: { name: string }) => [p.name, p]));
    expect(byName['Calendula hand cream']).toMatchObject({ type: 'oil_in_water', variantCount: 2, batchCount: 3 });
    expect(byName['Shea whipped body butter']).toMatchObject({ type: 'anhydrous_balm', variantCount: 1, batchCount: 1 });
    for (const id of Object.values(demo.variants)) {
      const v = await technician.get(`/api/variants/${id}`);
      expect(v.body.total).toEqual({ total: 100, missBy: 0, ok: true });
    }
    expect(demo.lotCodes).toHaveLength(4);
    expect(demo.lotCodes[0]).toMatch(/^CHC-A-\d{4}$/);
    expect(Object.keys(demo.ingredients).length).toBeGreaterThanOrEqual(14);
  });

  it('marks B as derived from A and shows the body butter fragrance warning', async () => {
    const b = await technician.get(`/api/variants/${demo.variants.handCreamB}`);
    expect(b.body.variant.derivedFrom).toMatchObject({ id: demo.variants.handCreamA, code: 'A' });
    expect(b.body.siblings.map((s: { code: string }) => s.code)).toEqual(['A']);
    const butter = await technician.get(`/api/variants/${demo.variants.bodyButterA}`);
    expect(butter.body.warnings).toHaveLength(1);
    expect(butter.body.warnings[0]).toMatchObject({ kind: 'above_max', limit: 0.5, index: 5 });
    expect(butter.body.warnings[0].message).toBe(
      "Meadow fragrance blend at 0.60 % is above the supplier's recommended maximum of 0.50 %",
    );
  });
});

describe('products', () => {
  it('creates, reads and renames a product, with audit rows', async () => {
    const created = await formulator.post('/api/products', { name: 'Rose facial oil', type: 'oil', notes: '  ' });
    expect(created.status).toBe(201);
    expect(created.body.product).toMatchObject({ name: 'Rose facial oil', type: 'oil', notes: null, variantCount: 0, batchCount: 0 });
    const id = created.body.product.id;

    const got = await technician.get(`/api/products/${id}`);
    expect(got.status).toBe(200);
    expect(got.body).toMatchObject({ variants: [], batches: [], nextCode: 'A' });

    const patched = await owner.patch(`/api/products/${id}`, { name: 'Rose & jojoba facial oil', notes: 'Night oil' });
    expect(patched.status).toBe(200);
    expect(patched.body.product).toMatchObject({ name: 'Rose & jojoba facial oil', notes: 'Night oil', type: 'oil' });

    const rows = await auditRows('product', id);
    expect(rows.map((r) => r.action).sort()).toEqual(['create', 'update']);
    const update = rows.find((r) => r.action === 'update')!;
    expect(parseJson(update.oldValue)).toEqual({ name: 'Rose facial oil', notes: null });
    expect(parseJson(update.newValue)).toEqual({ name: 'Rose & jojoba facial oil', notes: 'Night oil' });
  });

  it('refuses a duplicate name with 409 naming the field, on create and on rename', async () => {
    const dup = await formulator.post('/api/products', { name: 'Calendula hand cream', type: 'oil_in_water' });
    expect(dup.status).toBe(409);
    expect(dup.body.error.fields).toHaveProperty('name');
    const rename = await formulator.patch(`/api/products/${demo.products.bodyButter}`, { name: 'Calendula hand cream' });
    expect(rename.status).toBe(409);
    expect(rename.body.error.fields).toHaveProperty('name');
  });

  it('refuses bad input with 400 naming each field', async () => {
    const cases: [object, string][] = [
      [{ name: '', type: 'oil' }, 'name'],
      [{ name: 'x'.repeat(121), type: 'oil' }, 'name'],
      [{ name: 'Soap', type: 'bar_soap' }, 'type'],
      [{ name: 'Soap', type: 'other', labId: t.labs[1].id }, 'labId'],
      [{ name: 'Soap', type: 'other', notes: 'n'.repeat(2001) }, 'notes'],
    ];
    for (const [body, field] of cases) {
      const res = await formulator.post('/api/products', body);
      expect(res.status, JSON.stringify(body).slice(0, 60)).toBe(400);
      expect(res.body.error.fields).toHaveProperty(field);
    }
  });

  it('lists products with variant and batch counts', async () => {
    const res = await technician.get('/api/products');
    const cream = res.body.products.find((p: { id: number }) => p.id === demo.products.handCream);
    expect(cream.variantCount).toBeGreaterThanOrEqual(2);
    expect(cream.batchCount).toBeGreaterThanOrEqual(3);
  });
});

describe('ingredient library', () => {
  it('lists the lab library with use ranges and how many variants use each', async () => {
    const res = await technician.get('/api/ingredients');
    expect(res.status).toBe(200);
    const pe = res.body.ingredients.find((i: { inciName: string }) => i.inciName === 'Phenoxyethanol (and) Ethylhexylglycerin');
    expect(pe).toMatchObject({ function: 'preservative', useMinPercent: 0.5, useMaxPercent: 1, usedIn: 2 });
    expect(res.body.ingredients.some((i: { id: number }) => i.id === otherLabIngredientId)).toBe(false);
  });

  it('creates and edits an ingredient, with audit rows', async () => {
    const res = await formulator.post('/api/ingredients', {
      tradeName: 'Rosehip oil, cold pressed',
      inciName: 'Rosa Canina Fruit Oil',
      function: 'oil',
      useMinPercent: 1,
      useMaxPercent: 20,
      supplier: 'Brightwell Oils',
    });
    expect(res.status).toBe(201);
    expect(res.body.ingredient).toMatchObject({ useMinPercent: 1, useMaxPercent: 20, notes: null, usedIn: 0 });
    const id = res.body.ingredient.id;
    const patched = await owner.patch(`/api/ingredients/${id}`, { useMaxPercent: 30, notes: 'Keep cold' });
    expect(patched.status).toBe(200);
    expect(patched.body.ingredient).toMatchObject({ useMinPercent: 1, useMaxPercent: 30, notes: 'Keep cold' });
    const rows = await auditRows('ingredient', id);
    expect(rows.map((r) => r.action).sort()).toEqual(['create', 'update']);
    expect(parseJson(rows.find((r) => r.action === 'update')!.oldValue)).toEqual({ useMaxPercent: 20, notes: null });
  });

  it('refuses bad ranges, duplicates and unknown fields', async () => {
    const base = { tradeName: 'Test wax', inciName: 'Cera Alba', function: 'thickener' };
    const cases: [object, string][] = [
      [{ ...base, useMinPercent: 5, useMaxPercent: 2 }, 'useMaxPercent'],
      [{ ...base, useMinPercent: -1 }, 'useMinPercent'],
      [{ ...base, useMaxPercent: 101 }, 'useMaxPercent'],
      [{ ...base, useMaxPercent: '2' }, 'useMaxPercent'],
      [{ ...base, useMaxPercent: 1.23456 }, 'useMaxPercent'],
      [{ ...base, function: 'magic' }, 'function'],
      [{ ...base, inciName: 'i'.repeat(251) }, 'inciName'],
      [{ ...base, cas: '8012-89-3' }, 'cas'],
    ];
    for (const [body, field] of cases) {
      const res = await formulator.post('/api/ingredients', body);
      expect(res.status, JSON.stringify(body)).toBe(400);
      expect(res.body.error.fields).toHaveProperty(field);
    }
    const dup = await formulator.post('/api/ingredients', { ...base, tradeName: 'Xanthan gum, clear grade' });
    expect(dup.status).toBe(409);
    expect(dup.body.error.fields).toHaveProperty('tradeName');
    // A change that would put the stored minimum above the new maximum.
    const inverted = await formulator.patch(`/api/ingredients/${demo.ingredients.emulsifier}`, { useMaxPercent: 2 });
    expect(inverted.status).toBe(400);
    expect(inverted.body.error.fields).toHaveProperty('useMaxPercent');
  });
});

describe('variants: saving lines', () => {
  it('creates an empty variant with the next free code, then a full one; refuses a total off 100 %', async () => {
    const empty = await formulator.post(`/api/products/${demo.products.bodyButter}/variants`, { name: 'Trial: more jojoba' });
    expect(empty.status).toBe(201);
    expect(empty.body.variant).toMatchObject({ code: 'B', lineCount: 0, totalOk: false });
    const lines = await linesOf(demo.variants.bodyButterA);
    const full = await formulator.post(`/api/products/${demo.products.bodyButter}/variants`, { code: 'c', name: 'Copy by hand', lines });
    expect(full.status).toBe(201);
    expect(full.body.variant.code).toBe('C');
    expect(full.body.total.ok).toBe(true);

    const short = await formulator.post(`/api/products/${demo.products.bodyButter}/variants`, {
      name: 'Short',
      lines: lines.map((l, i) => (i === 0 ? { ...l, percent: l.percent - 0.5 } : l)),
    });
    expect(short.status).toBe(422);
    expect(short.body.error.message).toBe('Lines total 99.50 %: 0.50 % short of 100 %');
    expect(short.body.error.fields).toEqual({ lines: 'Lines total 99.50 %: 0.50 % short of 100 %' });

    const taken = await formulator.post(`/api/products/${demo.products.bodyButter}/variants`, { code: 'A', name: 'Again' });
    expect(taken.status).toBe(409);
    expect(taken.body.error.fields).toHaveProperty('code');
  });

  it('replaces header and lines in one save, returns range warnings, and writes one audit row with old and new lines', async () => {
    const id = demo.variants.handCreamA;
    const before = await linesOf(id);
    const pe = before.findIndex((l) => l.ingredientId === demo.ingredients.preservative);
    const water = before.findIndex((l) => l.ingredientId === demo.ingredients.water);
    const next = before.map((l, i) =>
      i === pe ? { ...l, percent: 1.2 } : i === water ? { ...l, percent: Number((l.percent - 0.2).toFixed(4)) } : l,
    );
    const res = await formulator.put(`/api/variants/${id}`, { code: 'A', name: '4 % emulsifier', notes: 'Preservative up for the challenge test', lines: next });
    expect(res.status).toBe(200);
    expect(res.body.total.ok).toBe(true);
    expect(res.body.warnings).toEqual([
      expect.objectContaining({ index: pe, kind: 'above_max', limit: 1, message: "Preservative PE-EHG at 1.20 % is above the supplier's recommended maximum of 1.00 %" }),
    ]);
    expect(await linesOf(id)).toEqual(next);

    const rows = (await auditRows('variant', id)).filter((r) => r.action === 'update');
    expect(rows).toHaveLength(1);
    expect(parseJson<{ lines: Line[] }>(rows[0].oldValue).lines).toEqual(before);
    expect(parseJson<{ lines: Line[] }>(rows[0].newValue).lines).toEqual(next);

    // Saving the same thing again changes nothing and writes no further audit row.
    const again = await formulator.put(`/api/variants/${id}`, { code: 'A', name: '4 % emulsifier', notes: 'Preservative up for the challenge test', lines: next });
    expect(again.status).toBe(200);
    expect((await auditRows('variant', id)).filter((r) => r.action === 'update')).toHaveLength(1);

    // Put it back for the other tests.
    expect((await formulator.put(`/api/variants/${id}`, { code: 'A', name: '4 % emulsifier', notes: 'First pilot. Slight thinning after two weeks at 40 °C.', lines: before })).status).toBe(200);
  });

  it('takes a formula entered to 4 decimals that sums to exactly 100', async () => {
    const created = (await formulator.post(`/api/products/${demo.products.handCream}/variants`, { name: 'Thirds' })).body.variant;
    const { id, code } = created as { id: number; code: string };
    const lines = [
      { ingredientId: demo.ingredients.almond, phase: 'A', percent: 33.3333 },
      { ingredientId: demo.ingredients.jojoba, phase: 'A', percent: 33.3333 },
      { ingredientId: demo.ingredients.shea, phase: 'A', percent: 33.3334 },
    ];
    const res = await formulator.put(`/api/variants/${id}`, { code, name: 'Thirds', lines });
    expect(res.status).toBe(200);
    expect(res.body.total).toEqual({ total: 100, missBy: 0, ok: true });
    // Within the 0.01 % tolerance (formulaTotal in shared/compute/formula.ts): 99.995 is accepted, 99.985 is not.
    const nearly = await formulator.put(`/api/variants/${id}`, { code, name: 'Thirds', lines: [...lines.slice(0, 2), { ...lines[2], percent: 33.3284 }] });
    expect(nearly.status).toBe(200);
    const off = await formulator.put(`/api/variants/${id}`, { code, name: 'Thirds', lines: [...lines.slice(0, 2), { ...lines[2], percent: 33.3184 }] });
    expect(off.status).toBe(422);
    expect(off.body.error.message).toBe('Lines total 99.9850 %: 0.0150 % short of 100 %');
    const over = await formulator.put(`/api/variants/${id}`, { code, name: 'Thirds', lines: [...lines.slice(0, 2), { ...lines[2], percent: 33.8334 }] });
    expect(over.status).toBe(422);
    expect(over.body.error.message).toBe('Lines total 100.50 %: 0.50 % over 100 %');
  });

  it('refuses bad lines with 400 naming the line, and leaves the stored lines as they were', async () => {
    const id = demo.variants.handCreamB;
    const before = await linesOf(id);
    const header = { code: 'B', name: '5 % emulsifier + 0.3 % xanthan' };
    const withLine2 = (patch: Record<string, unknown>) => before.map((l, i) => (i === 2 ? { ...l, ...patch } : l));
    const cases: [unknown[], string][] = [
      [withLine2({ percent: -0.3 }), 'lines.2.percent'],
      [withLine2({ percent: 0 }), 'lines.2.percent'],
      [withLine2({ percent: 100.5 }), 'lines.2.percent'],
      [withLine2({ percent: 'abc' }), 'lines.2.percent'],
      [withLine2({ percent: null }), 'lines.2.percent'],
      [withLine2({ percent: 0.30001 }), 'lines.2.percent'],
      [withLine2({ ingredientId: 99999999 }), 'lines.2.ingredientId'],
      [withLine2({ ingredientId: otherLabIngredientId }), 'lines.2.ingredientId'],
      [withLine2({ ingredientId: 'xanthan' }), 'lines.2.ingredientId'],
      [withLine2({ phase: '' }), 'lines.2.phase'],
      [withLine2({ phase: 'p'.repeat(25) }), 'lines.2.phase'],
      [withLine2({ colour: 'white' }), 'lines.2.colour'],
      [[], 'lines'],
    ];
    for (const [lines, field] of cases) {
      const res = await formulator.put(`/api/variants/${id}`, { ...header, lines });
      expect(res.status, field + JSON.stringify((lines as object[])[2] ?? null)).toBe(400);
      expect(res.body.error.fields).toHaveProperty(field);
      expect(await linesOf(id)).toEqual(before);
    }
    // Another lab's ingredient and an unknown one look the same (no leak).
    const unknown = await formulator.put(`/api/variants/${id}`, { ...header, lines: withLine2({ ingredientId: 99999999 }) });
    const foreign = await formulator.put(`/api/variants/${id}`, { ...header, lines: withLine2({ ingredientId: otherLabIngredientId }) });
    expect(foreign.body).toEqual(unknown.body);
    expect(foreign.body.error.fields['lines.2.ingredientId']).toBe("Line 3: no such ingredient in your lab's library");

    const extra = await formulator.put(`/api/variants/${id}`, { ...header, lines: before, productId: demo.products.bodyButter });
    expect(extra.status).toBe(400);
    expect(extra.body.error.fields).toHaveProperty('productId');
    const longName = await formulator.put(`/api/variants/${id}`, { ...header, name: 'n'.repeat(161), lines: before });
    expect(longName.status).toBe(400);
    expect(longName.body.error.fields).toHaveProperty('name');
    const clash = await formulator.put(`/api/variants/${id}`, { ...header, code: 'A', lines: before });
    expect(clash.status).toBe(409);
    expect(clash.body.error.fields).toHaveProperty('code');

    expect(await linesOf(id)).toEqual(before);
    const [v] = (await owner.get(`/api/products/${demo.products.handCream}/variants`)).body.variants.filter((x: { id: number }) => x.id === id);
    expect(v).toMatchObject({ code: 'B', name: '5 % emulsifier + 0.3 % xanthan' });
    expect((await auditRows('variant', id)).filter((r) => r.action === 'update')).toHaveLength(0);
  });
});

describe('variants: derive, compare, scale', () => {
  it('derives a copy with the same lines, the next code and a link back, with an audit row', async () => {
    const res = await formulator.post(`/api/variants/${demo.variants.handCreamB}/derive`, {});
    expect(res.status).toBe(201);
    const copy = res.body;
    expect(copy.variant.derivedFrom).toMatchObject({ id: demo.variants.handCreamB, code: 'B' });
    expect(copy.variant.code).toMatch(/^[C-Z]$/);
    expect(copy.variant.name).toBe('5 % emulsifier + 0.3 % xanthan (copy of B)');
    expect(await linesOf(copy.variant.id)).toEqual(await linesOf(demo.variants.handCreamB));
    const rows = await auditRows('variant', copy.variant.id);
    expect(rows).toHaveLength(1);
    expect(parseJson<{ derivedFromId: number }>(rows[0].newValue).derivedFromId).toBe(demo.variants.handCreamB);

    const named = await formulator.post(`/api/variants/${demo.variants.handCreamB}/derive`, { code: 'b9', name: 'B with less shea' });
    expect(named.status).toBe(201);
    expect(named.body.variant).toMatchObject({ code: 'B9', name: 'B with less shea' });
    const taken = await formulator.post(`/api/variants/${demo.variants.handCreamB}/derive`, { code: 'A' });
    expect(taken.status).toBe(409);
  });

  it('compares two variants of one product line by line', async () => {
    const res = await technician.get(`/api/variants/${demo.variants.handCreamA}/compare/${demo.variants.handCreamB}`);
    expect(res.status).toBe(200);
    expect(res.body.a.code).toBe('A');
    expect(res.body.b.code).toBe('B');
    expect(res.body.counts).toEqual({ added: 1, removed: 0, changed: 2, unchanged: 10 });
    const byId = Object.fromEntries(res.body.rows.map((r: { ingredientId: number }) => [r.ingredientId, r]));
    expect(byId[demo.ingredients.xanthan]).toMatchObject({ status: 'added', a: null, b: { phase: 'A', percent: 0.3 }, percentDelta: 0.3 });
    expect(byId[demo.ingredients.emulsifier]).toMatchObject({ status: 'changed', changes: ['percent'], percentDelta: 1 });
    expect(byId[demo.ingredients.water]).toMatchObject({ status: 'changed', percentDelta: -1.3, tradeName: 'Deionised water', inciName: 'Aqua' });
    expect(byId[demo.ingredients.glycerin].status).toBe('unchanged');

    const across = await technician.get(`/api/variants/${demo.variants.handCreamA}/compare/${demo.variants.bodyButterA}`);
    expect(across.status).toBe(422);
  });

  it('scales to a batch size, rounding for the bench balance', async () => {
    const res = await technician.get(`/api/variants/${demo.variants.handCreamA}/scale?batchGrams=1500`);
    expect(res.status).toBe(200);
    expect(res.body.batchGrams).toBe(1500);
    const byName = Object.fromEntries(res.body.lines.map((l: { tradeName: string }) => [l.tradeName, l]));
    // g = % / 100 x batch (hand arithmetic): 71.3 % of 1500 g = 1069.5 g; 0.3 % = 4.5 g; 0.1 % = 1.5 g.
    expect(byName['Deionised water']).toMatchObject({ grams: 1069.5, benchGrams: 1069.5 });
    expect(byName['Vitamin E T-70']).toMatchObject({ benchGrams: 4.5 });
    expect(byName['Phytic chelate 40']).toMatchObject({ benchGrams: 1.5 });
    expect(res.body.benchTotalGrams).toBe(1500);

    // 24 tubes x 50 g + 10 % overage = 1320 g (hand arithmetic).
    const tubes = await technician.get(`/api/variants/${demo.variants.handCreamA}/scale?containers=24&fillGrams=50&overagePercent=10`);
    expect(tubes.status).toBe(200);
    expect(tubes.body.batchGrams).toBeCloseTo(1320, 9);
    expect(tubes.body.basis).toEqual({ containers: 24, fillGrams: 50, overagePercent: 10 });
  });

  it('scales a 4 oz jar to about 113 g', async () => {
    // Common practice, no published source: a 4 oz jar holds about 113 g of a product of density near 1 (4 x 28.35 g).
    const res = await technician.get(`/api/variants/${demo.variants.bodyButterA}/scale?containers=1&fillOunces=4`);
    expect(res.status).toBe(200);
    expect(res.body.batchGrams).toBeCloseTo(4 * 28.35, 1);
    expect(Math.round(res.body.batchGrams)).toBe(113);
    expect(res.body.benchTotalGrams).toBeGreaterThan(113);
    expect(res.body.benchTotalGrams).toBeLessThan(113.6);
  });

  it('refuses unclear scaling requests with 400', async () => {
    const id = demo.variants.handCreamA;
    for (const q of ['', 'batchGrams=0', 'batchGrams=-5', 'batchGrams=abc', 'batchGrams=100&containers=2', 'containers=2', 'containers=2.5&fillGrams=50', 'containers=2&fillGrams=50&fillOunces=2', 'containers=2&fillGrams=50&overagePercent=150', 'batchGrams=100&foo=1']) {
      const res = await technician.get(`/api/variants/${id}/scale?${q}`);
      expect(res.status, q).toBe(400);
    }
  });
});

describe('batches', () => {
  const batch = (lotCode: string, extra: Record<string, unknown> = {}) => ({
    lotCode,
    madeOn: todayIn('Europe/Berlin'),
    sizeGrams: 1500,
    packaging: '120 mL PET jar, PP lid',
    fillAmount: 120,
    fillUnit: 'mL',
    ...extra,
  });

  it('records a batch with a snapshot of the formula and grams for its size', async () => {
    const res = await formulator.post(`/api/variants/${demo.variants.handCreamA}/batches`, batch('CHC-A-T01', { notes: 'Test lot' }));
    expect(res.status).toBe(201);
    expect(res.body.batch).toMatchObject({ lotCode: 'CHC-A-T01', sizeGrams: 1500, fillAmount: 120, fillUnit: 'mL', variant: { code: 'A' }, product: { name: 'Calendula hand cream' } });
    expect(res.body.snapshot.lines).toHaveLength(12);
    expect(res.body.snapshot.lines[0]).toMatchObject({ tradeName: 'Deionised water', inciName: 'Aqua', phase: 'A', percent: 71.3 });
    expect(res.body.snapshot.total).toBe(100);
    expect(res.body.scaled.lines[0].benchGrams).toBe(1069.5);
    expect(res.body.variantChangedSince).toBe(false);
    const rows = await auditRows('batch', res.body.batch.id);
    expect(rows).toHaveLength(1);
    expect(rows[0].action).toBe('create');

    const list = await technician.get(`/api/variants/${demo.variants.handCreamA}/batches`);
    expect(list.body.batches.map((b: { lotCode: string }) => b.lotCode)).toContain('CHC-A-T01');
    const all = await technician.get('/api/batches');
    expect(all.body.batches.length).toBeGreaterThanOrEqual(5);
  });

  it('keeps the snapshot when the variant is edited later', async () => {
    const made = await formulator.post(`/api/variants/${demo.variants.bodyButterA}/batches`, batch('SWB-A-T02', { fillAmount: 100, fillUnit: 'g' }));
    expect(made.status).toBe(201);
    const snapshotBefore = made.body.snapshot;
    const lines = await linesOf(demo.variants.bodyButterA);
    const edited = lines.map((l) =>
      l.ingredientId === demo.ingredients.fragrance ? { ...l, percent: 0.5 } : l.ingredientId === demo.ingredients.jojoba ? { ...l, percent: 14 } : l,
    );
    const put = await formulator.put(`/api/variants/${demo.variants.bodyButterA}`, { code: 'A', name: 'Shea 55 %, arrowroot 10 %', lines: edited });
    expect(put.status).toBe(200);
    expect(put.body.warnings).toEqual([]);

    const after = await technician.get(`/api/batches/${made.body.batch.id}`);
    expect(after.body.snapshot).toEqual(snapshotBefore);
    expect(after.body.snapshot.lines.find((l: { ingredientId: number }) => l.ingredientId === demo.ingredients.fragrance).percent).toBe(0.6);
    expect(after.body.variantChangedSince).toBe(true);
    const [row] = await t.db.select({ s: batches.formulaSnapshot }).from(batches).where(eq(batches.id, made.body.batch.id));
    expect(parseJson(row.s)).toEqual(snapshotBefore);
    // The demo batches made before too.
    const demoBatch = await technician.get(`/api/batches/${demo.batches[3]}`);
    expect(demoBatch.body.snapshot.lines.find((l: { ingredientId: number }) => l.ingredientId === demo.ingredients.fragrance).percent).toBe(0.6);
  });

  it('refuses a duplicate lot code with 409 naming lotCode, also in other letter case', async () => {
    const first = await formulator.post(`/api/variants/${demo.variants.handCreamB}/batches`, batch('CHC-B-T03'));
    expect(first.status).toBe(201);
    for (const lot of ['CHC-B-T03', 'chc-b-t03', demo.lotCodes[0]]) {
      const res = await formulator.post(`/api/variants/${demo.variants.handCreamA}/batches`, batch(lot));
      expect(res.status, lot).toBe(409);
      expect(res.body.error.fields).toHaveProperty('lotCode');
    }
  });

  it('refuses bad batch input with 400 naming the field', async () => {
    const tomorrow = new Date(Date.now() + 2 * 86_400_000).toISOString().slice(0, 10);
    const cases: [object, string][] = [
      [batch('X-1', { madeOn: tomorrow }), 'madeOn'],
      [batch('X-1', { madeOn: '2026-02-30' }), 'madeOn'],
      [batch('X-1', { madeOn: '01/11/2026' }), 'madeOn'],
      [batch('X-1', { sizeGrams: 0 }), 'sizeGrams'],
      [batch('X-1', { sizeGrams: -10 }), 'sizeGrams'],
      [batch('X-1', { sizeGrams: '1000' }), 'sizeGrams'],
      [batch('X-1', { fillUnit: null }), 'fillUnit'],
      [batch('X-1', { fillUnit: 'oz' }), 'fillUnit'],
      [batch('X-1', { packaging: '' }), 'packaging'],
      [batch('X-1', { packaging: 'p'.repeat(201) }), 'packaging'],
      [batch('L'.repeat(41)), 'lotCode'],
      [batch('<script>'), 'lotCode'],
      [batch('X-1', { variantId: demo.variants.handCreamB }), 'variantId'],
      [batch('X-1', { formulaSnapshot: [] }), 'formulaSnapshot'],
    ];
    for (const [body, field] of cases) {
      const res = await formulator.post(`/api/variants/${demo.variants.handCreamA}/batches`, body);
      expect(res.status, `${field} ${JSON.stringify(body)}`).toBe(400);
      expect(res.body.error.fields).toHaveProperty(field);
    }
    const [{ n }] = (await t.pool.query(`SELECT count(*) AS n FROM batches WHERE lot_code = 'X-1'`))[0] as { n: number }[];
    expect(Number(n)).toBe(0);
  });

  it('refuses a batch of a variant with no lines yet', async () => {
    const empty = await formulator.post(`/api/products/${demo.products.handCream}/variants`, { name: 'Not written yet' });
    const res = await formulator.post(`/api/variants/${empty.body.variant.id}/batches`, batch('CHC-EMPTY'));
    expect(res.status).toBe(422);
  });
});

describe('roles: technicians read everything and change nothing', () => {
  const writes = (): [string, string, () => object][] => [
    ['POST', '/api/products', () => ({ name: 'Tech product', type: 'gel' })],
    ['PATCH', `/api/products/${demo.products.handCream}`, () => ({ notes: 'tech' })],
    ['POST', '/api/ingredients', () => ({ tradeName: 'Tech ing', inciName: 'Aqua', function: 'solvent' })],
    ['PATCH', `/api/ingredients/${demo.ingredients.water}`, () => ({ notes: 'tech' })],
    ['POST', `/api/products/${demo.products.handCream}/variants`, () => ({ name: 'Tech variant' })],
    ['PUT', `/api/variants/${demo.variants.handCreamA}`, () => ({ code: 'A', name: 'x', lines: [{ ingredientId: demo.ingredients.water, phase: 'A', percent: 100 }] })],
    ['POST', `/api/variants/${demo.variants.handCreamA}/derive`, () => ({})],
    ['POST', `/api/variants/${demo.variants.handCreamA}/batches`, () => ({ lotCode: 'TECH-1', madeOn: '2026-01-05', sizeGrams: 100, packaging: 'jar' })],
  ];

  it('answers 403 to every write by a technician and stores nothing', async () => {
    const before = (await t.db.select({ id: products.id }).from(products)).length;
    const linesBefore = (await t.db.select({ id: formulaLines.id }).from(formulaLines)).length;
    for (const [method, path, body] of writes()) {
      const c = technician;
      const res = method === 'POST' ? await c.post(path, body()) : method === 'PATCH' ? await c.patch(path, body()) : await c.put(path, body());
      expect(res.status, `${method} ${path}`).toBe(403);
      expect(res.body.error.code).toBe('forbidden');
    }
    expect((await t.db.select({ id: products.id }).from(products)).length).toBe(before);
    expect((await t.db.select({ id: formulaLines.id }).from(formulaLines)).length).toBe(linesBefore);
  });

  it('answers 200 to every read by a technician', async () => {
    const reads = [
      '/api/products',
      `/api/products/${demo.products.handCream}`,
      `/api/products/${demo.products.handCream}/variants`,
      '/api/ingredients',
      `/api/ingredients/${demo.ingredients.water}`,
      `/api/variants/${demo.variants.handCreamA}`,
      `/api/variants/${demo.variants.handCreamA}/compare/${demo.variants.handCreamB}`,
      `/api/variants/${demo.variants.handCreamA}/scale?batchGrams=100`,
      `/api/variants/${demo.variants.handCreamA}/batches`,
      '/api/batches',
      `/api/batches/${demo.batches[0]}`,
    ];
    for (const path of reads) expect((await technician.get(path)).status, path).toBe(200);
  });

  it('answers 401 when signed out', async () => {
    expect((await t.client().get('/api/products')).status).toBe(401);
    expect((await t.client().get(`/api/variants/${demo.variants.handCreamA}`)).status).toBe(401);
  });
});

describe("lab isolation: another lab's ids answer 404", () => {
  it('for every read and write by the Copperbeech owner, exactly as for unknown ids', async () => {
    const v = demo.variants.handCreamA;
    const reads = [
      `/api/products/${demo.products.handCream}`,
      `/api/products/${demo.products.handCream}/variants`,
      `/api/ingredients/${demo.ingredients.water}`,
      `/api/variants/${v}`,
      `/api/variants/${v}/compare/${demo.variants.handCreamB}`,
      `/api/variants/${v}/scale?batchGrams=100`,
      `/api/variants/${v}/batches`,
      `/api/batches/${demo.batches[0]}`,
    ];
    for (const path of reads) {
      const res = await otherOwner.get(path);
      expect(res.status, path).toBe(404);
    }
    const foreign = await otherOwner.get(`/api/variants/${v}`);
    const unknown = await otherOwner.get('/api/variants/99999999');
    expect(foreign.body).toEqual(unknown.body);

    const writes: [string, string, object][] = [
      ['PATCH', `/api/products/${demo.products.handCream}`, { notes: 'copperbeech' }],
      ['PATCH', `/api/ingredients/${demo.ingredients.water}`, { notes: 'copperbeech' }],
      ['POST', `/api/products/${demo.products.handCream}/variants`, { name: 'Copperbeech variant' }],
      ['PUT', `/api/variants/${v}`, { code: 'A', name: 'x', lines: [{ ingredientId: otherLabIngredientId, phase: 'A', percent: 100 }] }],
      ['POST', `/api/variants/${v}/derive`, {}],
      ['POST', `/api/variants/${v}/batches`, { lotCode: 'CB-1', madeOn: '2026-01-05', sizeGrams: 100, packaging: 'jar' }],
    ];
    for (const [method, path, body] of writes) {
      const res = method === 'POST' ? await otherOwner.post(path, body) : method === 'PATCH' ? await otherOwner.patch(path, body) : await otherOwner.put(path, body);
      expect(res.status, `${method} ${path}`).toBe(404);
    }
    const lists = await Promise.all(['/api/products', '/api/ingredients', '/api/batches'].map((p) => otherOwner.get(p)));
    expect(lists[0].body.products).toEqual([]);
    expect(lists[1].body.ingredients.map((i: { tradeName: string }) => i.tradeName)).toEqual(['Copperbeech glycerin']);
    expect(lists[2].body.batches).toEqual([]);
    // Comparing with another lab's variant is as unknown as any other id.
    const mixed = await owner.get(`/api/variants/${v}/compare/${(await otherVariant()).id}`);
    expect(mixed.status).toBe(404);

    // Nothing was written to Larkspur's data by these attempts.
    expect((await owner.get(`/api/products/${demo.products.handCream}`)).body.product.notes).not.toBe('copperbeech');
  });

  async function otherVariant() {
    const p = await otherOwner.post('/api/products', { name: 'Copperbeech balm', type: 'anhydrous_balm' });
    const v = await otherOwner.post(`/api/products/${p.body.product.id}/variants`, {
      name: 'Only',
      lines: [{ ingredientId: otherLabIngredientId, phase: 'A', percent: 100 }],
    });
    expect(v.status).toBe(201);
    return v.body.variant as { id: number };
  }
});
