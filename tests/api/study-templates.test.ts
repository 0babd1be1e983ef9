/**
 * Plans from templates: a whole-study template saved from a plan or a study, a new study started
 * from it or from a copy of a previous study; the attribute set per product type. Invented lab data.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { attributes, auditLog, storageConditions, studyConditions } from '../../server/db/schema';
import { runDataMigrations } from '../../server/db/data-migrations';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;
let otherCat: Catalogue;

beforeAll(async () => {
  t = await createTestApp();
  [formulator, technician, otherOwner] = await Promise.all([t.signIn(DEMO.formulator), t.signIn(DEMO.technician), t.signIn(DEMO.otherOwner)]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  otherCat = await makeCatalogue(t.db, t.labs[1].id, 'Other lab cream');
});
afterAll(async () => t?.close());

/** What a template keeps of a plan. */
function templatePlanOf(plan: ReturnType<typeof planFor>) {
  return { conditions: plan.conditions, attributes: plan.attributes, samplesPerCell: 2, containerDescription: plan.containerDescription, fillGrams: plan.fillGrams };
}

describe('whole-study templates', () => {
  it('a formulator saves a plan as a template; the lab lists it; the audit trail has it', async () => {
    const res = await formulator.post('/api/study-templates', { name: 'Emulsion 12 weeks', description: 'Fridge control and 45 °C', plan: templatePlanOf(planFor(cat)) });
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.template).toMatchObject({ name: 'Emulsion 12 weeks', attributeCount: 3, samplesPerCell: 2, containerDescription: '50 mL PET jar', source: null });
    expect(res.body.template.conditions).toEqual([expect.stringMatching(/control .*\(2\)$/), expect.stringMatching(/45 °C .*\(2\)$/)]);
    const list = await formulator.get('/api/study-templates');
    expect(list.body.templates.map((x: { name: string }) => x.name)).toContain('Emulsion 12 weeks');
    const [row] = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'study_template'), eq(auditLog.entityId, String(res.body.template.id))));
    expect(row.action).toBe('create');
  });

  it('refuses a second template of the same name, a plan with another lab’s condition, and technicians', async () => {
    const plan = templatePlanOf(planFor(cat));
    await formulator.post('/api/study-templates', { name: 'Twice', plan });
    const dupe = await formulator.post('/api/study-templates', { name: 'Twice', plan });
    expect(dupe.status).toBe(409);
    expect(dupe.body.error.fields).toHaveProperty('name');
    const foreign = await formulator.post('/api/study-templates', { name: 'Foreign', plan: { ...plan, conditions: [{ ...plan.conditions[0], conditionId: otherCat.conditions.fridge }, plan.conditions[1]] } });
    expect(foreign.status).toBe(400);
    expect(foreign.body.error.fields).toHaveProperty(['plan.conditions.0.conditionId']);
    const both = await formulator.post('/api/study-templates', { name: 'Both', plan, studyId: 1 });
    expect(both.status).toBe(400);
    expect(both.body.error.fields).toHaveProperty('plan');
    expect((await technician.get('/api/study-templates')).status).toBe(403);
    expect((await technician.post('/api/study-templates', { name: 'Tech', plan })).status).toBe(403);
  });

  it('a new study starts from a template: the draft has conditions, pairing and criteria, no product, batches or dates', async () => {
    const plan = planFor(cat);
    plan.conditions[1] = { ...plan.conditions[1], pairControl: false, pairingOffReason: 'Read the control once a month only' } as never;
    const saved = (await formulator.post('/api/study-templates', { name: 'Unpaired oven', plan: templatePlanOf(plan) })).body.template;
    const res = await formulator.get(`/api/study-templates/${saved.id}/draft`);
    expect(res.status).toBe(200);
    expect(res.body.from).toEqual({ kind: 'template', id: saved.id, name: 'Unpaired oven' });
    expect(res.body.leftOut).toEqual([]);
    const d = res.body.draft;
    expect(d).not.toHaveProperty('batchIds');
    expect(d).not.toHaveProperty('startDate');
    expect(d.productId).toBeNull();
    expect(d.conditions[1]).toMatchObject({ conditionId: cat.conditions.oven45, role: 'accelerated', pairControl: false, pairingOffReason: 'Read the control once a month only' });
    expect(d.attributes).toEqual(plan.attributes);
    expect(d.samplesPerCell).toBe(2);
    // The formulator picks the product, batches and a start date, and the plan saves and starts.
    const study = await formulator.post('/api/studies', { ...d, productId: cat.productId, batchIds: cat.batchIds, startDate: '2026-11-02', title: 'From a template' });
    expect(study.status, JSON.stringify(study.body)).toBe(201);
    expect(study.body.study.conditions.map((c: { conditionId: number }) => c.conditionId)).toEqual([cat.conditions.fridge, cat.conditions.oven45]);
    const started = await formulator.post(`/api/studies/${study.body.study.id}/start`);
    expect(started.status).toBe(200);
    expect(started.body.study.samples).toHaveLength(2 * 3 * 2); // 2 batches x (2 conditions + retained) x 2 per cell
  });

  it('saves a study as a template, dropping a day 0 kept from before the initial test', async () => {
    const s = (await formulator.post('/api/studies', planFor(cat))).body.study;
    // An older plan with a day 0 in the oven (before one initial test per batch).
    const [oven] = await t.db.select().from(studyConditions).where(and(eq(studyConditions.studyId, s.id), eq(studyConditions.conditionId, cat.conditions.oven45)));
    await t.db.update(studyConditions).set({ offsets: [{ unit: 'day', n: 0 }, ...oven.offsets] }).where(eq(studyConditions.id, oven.id));
    const res = await formulator.post('/api/study-templates', { name: 'From study', studyId: s.id });
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.template.source).toEqual({ id: s.id, title: 'Test study' });
    const draft = (await formulator.get(`/api/study-templates/${res.body.template.id}/draft`)).body.draft;
    expect(draft.conditions[1].offsets).toEqual([{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }]);
    expect((await otherOwner.post('/api/study-templates', { name: 'X', studyId: s.id })).status).toBe(404);
  });

  it('copies a previous study: same product and plan, no batches or dates; a retired condition and attribute are named as left out', async () => {
    const plan = planFor(cat);
    plan.conditions.push({ conditionId: cat.conditions.room, role: 'real_time' as never, template: 'real-time-36m', offsets: [{ unit: 'month', n: 3 }, { unit: 'month', n: 6 }] });
    const s = (await formulator.post('/api/studies', { ...plan, notes: 'Watch the oil phase' })).body.study;
    await formulator.post(`/api/studies/${s.id}/start`);
    await t.db.update(storageConditions).set({ active: false }).where(eq(storageConditions.id, cat.conditions.room));
    const odor = cat.attributeIds.odor;
    await t.db.update(attributes).set({ active: false }).where(eq(attributes.id, odor));
    try {
      const res = await formulator.get(`/api/studies/${s.id}/plan-draft`);
      expect(res.status).toBe(200);
      expect(res.body.from).toEqual({ kind: 'study', id: s.id, name: 'Test study' });
      const d = res.body.draft;
      expect(d.productId).toBe(cat.productId);
      expect(d.notes).toBe('Watch the oil phase');
      expect(d.conditions.map((c: { conditionId: number }) => c.conditionId)).toEqual([cat.conditions.fridge, cat.conditions.oven45]);
      expect(d.attributes.map((a: { attributeId: number }) => a.attributeId)).toEqual([cat.attributeIds.ph, cat.attributeIds.separation]);
      expect(res.body.leftOut.join(' ')).toMatch(/25 °C \/ 60 % RH .*no longer in use/);
      expect(res.body.leftOut.join(' ')).toMatch(/Odor: the attribute is no longer in use/);
      expect((await otherOwner.get(`/api/studies/${s.id}/plan-draft`)).status).toBe(404);
      expect((await technician.get(`/api/studies/${s.id}/plan-draft`)).status).toBe(403);
    } finally {
      await t.db.update(storageConditions).set({ active: true }).where(eq(storageConditions.id, cat.conditions.room));
      await t.db.update(attributes).set({ active: true }).where(eq(attributes.id, odor));
    }
  });

  it('deletes a template with its audit row; another lab’s owner gets 404 on it', async () => {
    const saved = (await formulator.post('/api/study-templates', { name: 'To delete', plan: templatePlanOf(planFor(cat)) })).body.template;
    expect((await otherOwner.get(`/api/study-templates/${saved.id}/draft`)).status).toBe(404);
    expect((await otherOwner.delete(`/api/study-templates/${saved.id}`)).status).toBe(404);
    expect((await technician.delete(`/api/study-templates/${saved.id}`)).status).toBe(403);
    expect((await formulator.delete(`/api/study-templates/${saved.id}`)).status).toBe(204);
    expect((await formulator.get(`/api/study-templates/${saved.id}/draft`)).status).toBe(404);
    const rows = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'study_template'), eq(auditLog.entityId, String(saved.id))));
    expect(rows.map((r) => r.action).sort()).toEqual(['create', 'delete']);
    expect((await otherOwner.get('/api/study-templates')).body.templates).toEqual([]);
  });
});

describe('the plan preview', () => {
  it('warns about a condition left without a pull for over twice its interval (shared/compute/study-calendar.ts pullGapWarnings)', async () => {
    const plan = planFor(cat);
    plan.conditions[1].offsets = [1, 2, 4, 12].map((n) => ({ unit: 'week', n }));
    const res = await formulator.post('/api/studies/preview', plan);
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.preview.warnings).toContainEqual(expect.stringMatching(/^45 °C \d+: no pull between Week 4 and Week 12 \(8 weeks\), over twice its usual interval/));
    // The fridge control's own schedule (weeks 1 and 4) is too short to have an interval.
    expect(res.body.preview.warnings.join(' ')).not.toMatch(/control \d+: no pull between/);
  });
});

describe('attribute sets per product type (defaults: common practice, no published source)', () => {
  const codesOf = async (c: Client, type: string) => {
    const [sets, lib] = await Promise.all([c.get('/api/attribute-sets'), c.get('/api/attributes')]);
    const set = sets.body.sets.find((s: { productType: string }) => s.productType === type);
    return { set, codes: set.attributeIds.map((id: number) => lib.body.attributes.find((a: { id: number }) => a.id === id).code) as string[] };
  };

  it('gives each product type its own checks', async () => {
    const res = await technician.get('/api/attribute-sets');
    expect(res.status).toBe(200);
    expect(res.body.sets).toHaveLength(8);
    const balm = await codesOf(technician, 'anhydrous_balm');
    expect(balm.set).toMatchObject({ label: 'Anhydrous balm or butter', edited: false });
    expect(balm.codes).toEqual(expect.arrayContaining(['graininess', 'bloom', 'hardness']));
    expect(balm.codes).not.toContain('separation');
    expect(balm.codes).not.toContain('ph');
    expect((await codesOf(technician, 'oil_in_water')).codes).toEqual(expect.arrayContaining(['separation', 'viscosity', 'ph']));
    const scrub = (await codesOf(technician, 'anhydrous_scrub')).codes;
    expect(scrub).toEqual(expect.arrayContaining(['oil_separation', 'crystal_dissolution', 'grit_feel']));
    expect(scrub).not.toContain('separation');
    expect((await codesOf(technician, 'surfactant_wash')).codes).toEqual(expect.arrayContaining(['viscosity', 'clarity', 'foam']));
  });

  it('the new starter attributes have their own scales and units', async () => {
    const lib = (await technician.get('/api/attributes')).body.attributes as { code: string; kind: string; unit: string | null; scale: { grade: number; label: string }[] | null }[];
    const by = (code: string) => lib.find((a) => a.code === code)!;
    expect(by('graininess')).toMatchObject({ kind: 'graded' });
    expect(by('graininess').scale![0]).toEqual({ grade: 0, label: 'Smooth' });
    expect(by('hardness')).toMatchObject({ kind: 'measured', unit: 'N' });
    expect(by('foam')).toMatchObject({ kind: 'measured', unit: 'mL' });
    expect(by('grit_feel')).toMatchObject({ kind: 'compared' });
  });

  it('the lab edits a set, and can go back to the default; audited; technicians and other labs’ attributes refused', async () => {
    const lib = (await formulator.get('/api/attributes')).body.attributes as { id: number; code: string }[];
    const id = (code: string) => lib.find((a) => a.code === code)!.id;
    const ids = [id('appearance'), id('graininess'), id('water_activity')];
    const res = await formulator.put('/api/attribute-sets/anhydrous_balm', { attributeIds: ids });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    // In library order.
    expect(res.body.set).toMatchObject({ productType: 'anhydrous_balm', attributeIds: [...ids].sort((a, b) => a - b), edited: true });
    expect((await codesOf(technician, 'anhydrous_balm')).codes).toEqual(['appearance', 'water_activity', 'graininess']);
    // Other product types keep their default.
    expect((await codesOf(technician, 'oil_in_water')).set.edited).toBe(false);

    expect((await technician.put('/api/attribute-sets/anhydrous_balm', { attributeIds: ids })).status).toBe(403);
    const foreign = (await otherOwner.get('/api/attributes')).body.attributes[0].id;
    const bad = await formulator.put('/api/attribute-sets/anhydrous_balm', { attributeIds: [ids[0], foreign] });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields['attributeIds.1']).toMatch(/No such attribute/);
    expect((await formulator.put('/api/attribute-sets/lotion', { attributeIds: ids })).status).toBe(400);
    // Another lab's sets are its own.
    const theirs = (await otherOwner.get('/api/attribute-sets')).body.sets.find((s: { productType: string }) => s.productType === 'anhydrous_balm');
    expect(theirs.edited).toBe(false);

    const reset = await formulator.delete('/api/attribute-sets/anhydrous_balm');
    expect(reset.body.set.edited).toBe(false);
    expect((await codesOf(technician, 'anhydrous_balm')).codes).toContain('bloom');
    const rows = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'attribute_set'), eq(auditLog.labId, t.labs[0].id)));
    expect(rows).toHaveLength(2);
  });

  it('a deactivated attribute drops out of the set', async () => {
    const lib = (await formulator.get('/api/attributes')).body.attributes as { id: number; code: string }[];
    const bloom = lib.find((a) => a.code === 'bloom')!.id;
    await formulator.patch(`/api/attributes/${bloom}`, { active: false });
    expect((await codesOf(technician, 'anhydrous_balm')).codes).not.toContain('bloom');
    await formulator.patch(`/api/attributes/${bloom}`, { active: true });
  });

  it('labs made before the new attributes get them when the app starts (data migration)', async () => {
    const labId = t.labs[1].id;
    await t.db.delete(attributes).where(and(eq(attributes.labId, labId), eq(attributes.code, 'crystal_dissolution')));
    expect((await otherOwner.get('/api/attributes')).body.attributes.map((a: { code: string }) => a.code)).not.toContain('crystal_dissolution');
    await runDataMigrations(t.db);
    expect((await otherOwner.get('/api/attributes')).body.attributes.map((a: { code: string }) => a.code)).toContain('crystal_dissolution');
  });
});
