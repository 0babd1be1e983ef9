/**
 * Colour from photos: the lab's reference cards, marking the product and card regions on a photo
 * (measured from the original), ΔE00 against the initial photo and the same-day control, re-marking
 * kept with its reason, bad input, roles and another lab.
 */
import { and, eq } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { auditLog, photoRegions } from '../../server/db/schema';
import { deltaE2000 } from '../../shared/compute/color';
import { judgeDeltaE, linearRgbToLab, srgbToLinear } from '../../shared/compute/photo-colour';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';

let t: TestApp;
let technician: Client, formulator: Client, otherOwner: Client;
type Cp = { id: number; label: string; kind: string; studyConditionId: number | null };
type Sample = { code: string; studyConditionId: number | null; batchId: number };
const ids = { initial: 0, oven: 0, fridge: 0, tiny: 0 };
let cardId = 0;
let studyId = 0;
let studyAttr: (code: string) => number;
let ovenCode = '';
let ovenW1 = 0;

const PRODUCT = { x: 0.1, y: 0.2, w: 0.3, h: 0.5 };
const PATCH = { x: 0.6, y: 0.2, w: 0.3, h: 0.5 };
type Rgb = [number, number, number];
/** Lab of an sRGB colour: IEC 61966-2-1 decoding, CIE 15 CIELAB (D65). */
const labOf = (rgb: Rgb) => linearRgbToLab(rgb.map((v) => srgbToLinear(v / 255)) as Rgb);
const GREY: Rgb = [160, 160, 160];

/** A 400 x 300 photo: product box and grey card box on a background, flat colours. */
async function photo(product: Rgb, w = 400, h = 300): Promise<Buffer> {
  const box = (b: typeof PRODUCT, rgb: Rgb) => ({
    input: { create: { width: Math.round(b.w * w), height: Math.round(b.h * h), channels: 3 as const, background: { r: rgb[0], g: rgb[1], b: rgb[2] } } },
    left: Math.round(b.x * w),
    top: Math.round(b.y * h),
  });
  return sharp({ create: { width: w, height: h, channels: 3, background: { r: 90, g: 90, b: 100 } } })
    .composite([box(PRODUCT, product), box(PATCH, GREY)])
    .png()
    .toBuffer();
}

async function upload(code: string, cpId: number, bytes: Buffer): Promise<number> {
  const res = await formulator.agent.post(`/api/samples/${code}/checkpoints/${cpId}/photos`).set('X-Keepwell-Request', '1').attach('photos', bytes, 'p.png');
  expect(res.status).toBe(201);
  return res.body.photos.at(-1).id;
}

beforeAll(async () => {
  t = await createTestApp();
  [technician, formulator, otherOwner] = await Promise.all([t.signIn(DEMO.technician), t.signIn(DEMO.formulator), t.signIn(DEMO.otherOwner)]);
  const cat = await makeCatalogue(t.db, t.labs[0].id);
  const attr = await formulator.post('/api/attributes', { code: 'color_de_photo', name: 'Colour ΔE00 (photo)', kind: 'measured', decimals: 1, defaultCriterion: { kind: 'delta_e00_max', max: 2 } });
  expect(attr.status).toBe(201);
  const plan = planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -7));
  const badPlan = await formulator.post('/api/studies', { ...plan, attributes: [...plan.attributes, { attributeId: attr.body.attribute.id, criterion: { kind: 'delta_e00_max', max: 0 } }] });
  expect(badPlan.status).toBe(400);
  expect(Object.keys(badPlan.body.error.fields).join()).toMatch(/criterion\.max/);
  const instrument = ['color_l', 'color_a', 'color_b'].map((c) => ({ attributeId: cat.attributeIds[c], criterion: { kind: 'none' as const } }));
  const draft = await formulator.post('/api/studies', {
    ...plan,
    attributes: [...plan.attributes, { attributeId: attr.body.attribute.id, criterion: { kind: 'delta_e00_max', max: 2 } }, ...instrument],
  });
  expect(draft.status).toBe(201);
  const study = (await formulator.post(`/api/studies/${draft.body.study.id}/start`)).body.study;
  studyId = study.id;
  studyAttr = (code: string) => study.attributes.find((a: { code: string }) => a.code === code).id;
  ovenCode = (study.samples as Sample[]).find((s) => s.studyConditionId === study.conditions[1].id)!.code;
  const [fridge, oven] = [study.conditions[0].id, study.conditions[1].id];
  const cps: Cp[] = study.checkpoints;
  const samples: Sample[] = study.samples;
  const batch = samples.find((s) => s.studyConditionId === oven)!.batchId;
  const inBatch = samples.filter((s) => s.batchId === batch);
  const initialCp = cps.find((c) => c.kind === 'initial')!;
  const w1 = (sc: number) => cps.find((c) => c.label === 'Week 1' && c.studyConditionId === sc)!;
  ids.initial = await upload(inBatch.find((s) => s.studyConditionId === null)!.code, initialCp.id, await photo([222, 196, 150]));
  ids.fridge = await upload(inBatch.find((s) => s.studyConditionId === fridge)!.code, w1(fridge).id, await photo([221, 195, 150]));
  ovenW1 = w1(oven).id;
  ids.oven = await upload(inBatch.find((s) => s.studyConditionId === oven)!.code, w1(oven).id, await photo([214, 180, 118]));
  ids.tiny = await upload(inBatch.find((s) => s.studyConditionId === oven)!.code, w1(oven).id, await sharp({ create: { width: 150, height: 100, channels: 3, background: '#888' } }).png().toBuffer());
});
afterAll(async () => {
  await t?.close();
});

describe('reference cards', () => {
  it('formulators add a card with its CIELAB values; technicians may not; bad values are named', async () => {
    expect((await technician.post('/api/colour-cards', { name: 'Grey', L: 65, a: 0, b: 0 })).status).toBe(403);
    const bad = await formulator.post('/api/colour-cards', { name: 'Grey' });
    expect(bad.status).toBe(400);
    expect(Object.keys(bad.body.error.fields).sort()).toEqual(['L', 'a', 'b']);
    const card = labOf(GREY);
    const res = await formulator.post('/api/colour-cards', { name: 'Grey card', L: card.L, a: card.a, b: card.b });
    expect(res.status).toBe(201);
    cardId = res.body.card.id;
    expect((await technician.get('/api/colour-cards')).body.cards.map((c: { name: string }) => c.name)).toEqual(['Grey card']);
    expect((await otherOwner.get('/api/colour-cards')).body.cards).toEqual([]);
  });
});

describe('marking regions', () => {
  it('a photo without marked regions says so and computes nothing', async () => {
    const res = await technician.get(`/api/photos/${ids.oven}/colour`);
    expect(res.status).toBe(200);
    expect(res.body.marked).toBeNull();
    expect(res.body.vsInitial.deltaE).toBeNull();
    expect(res.body.withheld[0]).toMatch(/not marked/);
  });

  it('refuses no regions, boxes outside the image and an unknown card, naming the fields', async () => {
    const none = await technician.put(`/api/photos/${ids.oven}/regions`, { cardId });
    expect(none.status).toBe(400);
    expect(Object.keys(none.body.error.fields)).toEqual(expect.arrayContaining(['product', 'patch']));
    const outside = await technician.put(`/api/photos/${ids.oven}/regions`, { product: { x: 0.8, y: 0.2, w: 0.4, h: 0.2 }, patch: { ...PATCH, y: -0.1 }, cardId });
    expect(outside.status).toBe(400);
    expect(outside.body.error.fields['product.w']).toMatch(/right edge/);
    expect(outside.body.error.fields['patch.y']).toBeDefined();
    const noCard = await technician.put(`/api/photos/${ids.oven}/regions`, { product: PRODUCT, patch: PATCH, cardId: 999999 });
    expect(noCard.status).toBe(400);
    expect(noCard.body.error.fields.cardId).toBeDefined();
    expect(await t.db.select().from(photoRegions)).toEqual([]);
  });

  it('refuses a photo too small to measure', async () => {
    const res = await technician.put(`/api/photos/${ids.tiny}/regions`, { product: PRODUCT, patch: PATCH, cardId });
    expect(res.status).toBe(422);
    expect(res.body.error.fields.photo).toMatch(/200 pixels/);
    expect(await t.db.select().from(photoRegions)).toEqual([]);
  });

  it('measures ΔE00 against the initial photo and the same-day control', async () => {
    for (const id of [ids.initial, ids.fridge]) expect((await technician.put(`/api/photos/${id}/regions`, { product: PRODUCT, patch: PATCH, cardId })).status).toBe(200);
    const res = await technician.put(`/api/photos/${ids.oven}/regions`, { product: PRODUCT, patch: PATCH, cardId });
    expect(res.status).toBe(200);
    // Expected: CIEDE2000 of the two sRGB colours' CIELAB (IEC 61966-2-1, CIE 15), within 1 ΔE00 after correction.
    const expected = deltaE2000(labOf([222, 196, 150]), labOf([214, 180, 118]))!;
    expect(Math.abs(res.body.vsInitial.deltaE - expected)).toBeLessThan(1);
    expect(res.body.vsControl.photoId).toBe(ids.fridge);
    expect(Math.abs(res.body.vsControl.deltaE - deltaE2000(labOf([221, 195, 150]), labOf([214, 180, 118]))!)).toBeLessThan(1);
    expect(res.body.swatch).toMatch(/^#[0-9a-f]{6}$/);
    expect(res.body.instrument).toBeNull();
    // The initial photo is its own baseline; a later pull's boxes are offered again.
    expect((await technician.get(`/api/photos/${ids.initial}/colour`)).body.vsInitial.deltaE).toBe(0);
    expect((await technician.get(`/api/photos/${ids.tiny}/colour`)).body.previous).toMatchObject({ product: PRODUCT, patch: PATCH, cardId });
    const [row] = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'photo_regions'), eq(auditLog.entityId, String(ids.oven))));
    expect(row.action).toBe('create');
  });

  it('marking again needs a reason and keeps the earlier boxes, who and when', async () => {
    const noReason = await technician.put(`/api/photos/${ids.oven}/regions`, { product: { ...PRODUCT, w: 0.2 }, patch: PATCH, cardId });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields.reason).toBeDefined();
    const res = await formulator.put(`/api/photos/${ids.oven}/regions`, { product: { ...PRODUCT, w: 0.2 }, patch: PATCH, cardId, reason: 'Box caught the jar rim' });
    expect(res.status).toBe(200);
    expect(res.body.marked.reason).toBe('Box caught the jar rim');
    expect(res.body.history).toHaveLength(1);
    expect(res.body.history[0].product).toEqual(PRODUCT);
    const rows = await t.db.select().from(photoRegions).where(eq(photoRegions.photoId, ids.oven));
    expect(rows).toHaveLength(2);
    expect(rows.filter((r) => r.replacedAt === null)).toHaveLength(1);
    const audits = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'photo_regions'), eq(auditLog.entityId, String(ids.oven))));
    expect(audits.map((a) => a.action)).toEqual(['create', 'update']);
    expect(audits[1].reason).toBe('Box caught the jar rim');
    // The audit trail in words (the owner reads it).
    const owner = await t.signIn(DEMO.owner);
    const sentences = (await owner.get('/api/audit')).body.rows.map((r: { sentence: string }) => r.sentence).join('\n');
    expect(sentences).toMatch(/Marked again the product and the reference card \(Grey card\) on a photo of sample \w+ at Week 1/);
  });

  it("the study's photo strip gets each marked photo's swatch and ΔE00", async () => {
    const res = await technician.get(`/api/studies/${studyId}/photo-colours`);
    expect(res.status).toBe(200);
    const oven = res.body.colours.find((c: { photoId: number }) => c.photoId === ids.oven);
    expect(oven.swatch).toMatch(/^#[0-9a-f]{6}$/);
    expect(oven.deltaE).toBeGreaterThan(2);
    expect(res.body.colours.find((c: { photoId: number }) => c.photoId === ids.initial).deltaE).toBe(0);
    expect((await otherOwner.get(`/api/studies/${studyId}/photo-colours`)).status).toBe(404);
  });

  it('an instrument reading at the checkpoint wins: shown first, the photo estimate secondary', async () => {
    const entries = [
      { studyAttributeId: studyAttr('color_l'), value: 88.1 },
      { studyAttributeId: studyAttr('color_a'), value: 1.2 },
      { studyAttributeId: studyAttr('color_b'), value: 24.5 },
    ];
    const saved = await formulator.put(`/api/samples/${ovenCode}/checkpoints/${ovenW1}/observations`, { entries });
    expect(saved.status, JSON.stringify(saved.body)).toBe(200);
    const res = await technician.get(`/api/photos/${ids.oven}/colour`);
    expect(res.body.instrument.value).toBe('Color L* 88.1, Color a* 1.2, Color b* 24.5');
    expect(res.body.vsInitial.deltaE).not.toBeNull();
  });

  it("another lab's photo answers 404, like an unknown one", async () => {
    expect((await otherOwner.get(`/api/photos/${ids.oven}/colour`)).status).toBe(404);
    expect((await otherOwner.put(`/api/photos/${ids.oven}/regions`, { product: PRODUCT, patch: PATCH, cardId, reason: 'x' })).status).toBe(404);
    expect((await technician.get('/api/photos/99999999/colour')).status).toBe(404);
  });
});

describe('criterion: colour difference from day 0 at most N (ΔE00)', () => {
  it("judges the photo's ΔE00 against the initial photo with the study's criterion", async () => {
    const res = await technician.get(`/api/photos/${ids.oven}/colour`);
    // ΔE00 of about 7.7 (cream to yellowed) against at most 2.
    expect(res.body.criterion).toMatchObject({ attribute: 'Colour ΔE00 (photo)', max: 2, verdict: 'fail' });
    expect(res.body.criterion.message).toMatch(/allowed at most 2/);
    expect((await technician.get(`/api/photos/${ids.tiny}/colour`)).body.criterion.verdict).toBe('withheld');
  });

  it('passes at or under the limit, fails over it, gives no verdict when withheld', () => {
    expect(judgeDeltaE(1.9, 2).verdict).toBe('pass');
    expect(judgeDeltaE(2.4, 2)).toEqual({ verdict: 'fail', message: 'Colour difference from day 0 ΔE00 2.4; allowed at most 2' });
    expect(judgeDeltaE(null, 2).verdict).toBe('withheld');
  });
});
