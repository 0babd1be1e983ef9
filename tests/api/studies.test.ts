import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq, sql } from 'drizzle-orm';
import { auditLog, checkpoints, samples, storageConditions, studies } from '../../server/db/schema';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;
let otherCat: Catalogue;

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  otherCat = await makeCatalogue(t.db, t.labs[1].id, 'Other lab cream');
});
afterAll(async () => t?.close());

const labToday = () => localDateInZone(new Date(), 'Europe/Berlin');

async function draft(plan = planFor(cat)) {
  const res = await formulator.post('/api/studies', plan);
  expect(res.status, JSON.stringify(res.body)).toBe(201);
  return res.body.study as { id: number };
}

describe('attributes', () => {
  it('every lab starts with the starter set', async () => {
    const res = await technician.get('/api/attributes');
    expect(res.status).toBe(200);
    const codes = res.body.attributes.map((a: { code: string }) => a.code);
    for (const c of ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity', 'mass', 'color_l', 'pack_integrity']) {
      expect(codes).toContain(c);
    }
    const sep = res.body.attributes.find((a: { code: string }) => a.code === 'separation');
    expect(sep.scale).toHaveLength(5);
  });

  it('a formulator adds a graded attribute; duplicates, bad scales and technicians are refused', async () => {
    const body = {
      code: 'crystals',
      name: 'Crystals',
      kind: 'graded',
      scale: [
        { grade: 0, label: 'None' },
        { grade: 1, label: 'A few' },
        { grade: 2, label: 'Many' },
      ],
      defaultCriterion: { kind: 'worst_grade', grade: 0 },
    };
    expect((await formulator.post('/api/attributes', body)).status).toBe(201);
    const dupe = await formulator.post('/api/attributes', body);
    expect(dupe.status).toBe(409);
    expect(dupe.body.error.fields).toHaveProperty('code');
    const noScale = await formulator.post('/api/attributes', { ...body, code: 'grit', scale: undefined });
    expect(noScale.status).toBe(400);
    expect(noScale.body.error.fields).toHaveProperty('scale');
    expect((await technician.post('/api/attributes', { ...body, code: 'other' })).status).toBe(403);
  });
});

describe('plan, preview and start', () => {
  it('previews a plan: counts, grams, dated checkpoints, no-control and weekend warnings, cautions', async () => {
    const plan = planFor(cat, '2026-11-02'); // a Monday
    const res = await formulator.post('/api/studies/preview', plan);
    expect(res.status).toBe(200);
    const p = res.body.preview;
    expect(p.sampleCount).toBe(6); // 2 batches x (2 conditions + the retained sample for the initial test) x 1
    expect(p.gramsPerBatch).toBe(135); // 3 containers x 45 g
    expect(p.initial).toMatchObject({ label: 'Initial', dueDate: '2026-11-02', windowEnd: '2026-11-03', samples: 2 });
    expect(p.perCondition[0].checkpoints.map((c: { dueDate: string }) => c.dueDate)).toEqual(['2026-11-09', '2026-11-30']);
    expect(p.cautions.join(' ')).toMatch(/heat-resistant gloves/);
    expect(p.cautions.at(-1)).toMatch(/local regulations/);
    const noControl = await formulator.post('/api/studies/preview', { ...plan, conditions: [plan.conditions[1]], startDate: '2026-11-07' });
    const warnings = noControl.body.preview.warnings.join(' ');
    expect(warnings).toMatch(/No control condition/);
    expect(warnings).toMatch(/weekend/); // 2026-11-07 is a Saturday
  });

  it('previews the centrifuge caution with the others, and none for a plain fridge and room plan', async () => {
    const [{ id: spin }] = await t.db
      .insert(storageConditions)
      .values({ labId: t.labs[0].id, name: 'Centrifuge preview', kind: 'mechanical', rpm: 3000, minutes: 30, radiusCm: 10, location: 'bench' })
      .$returningId();
    const plan = planFor(cat);
    const res = await formulator.post('/api/studies/preview', {
      ...plan,
      // A centrifuge test is itself done at the start: the one condition that keeps a day 0.
      conditions: [...plan.conditions, { conditionId: spin, role: 'stress', template: 'custom', offsets: [{ unit: 'day', n: 0 }] }],
    });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    const cautions: string[] = res.body.preview.cautions;
    expect(cautions.some((c) => /heat-resistant gloves/.test(c))).toBe(true);
    expect(cautions.some((c) => /balance the rotor/i.test(c))).toBe(true);
    expect(cautions.at(-1)).toMatch(/local regulations/);
    const mild = await formulator.post('/api/studies/preview', {
      ...plan,
      conditions: [plan.conditions[0], { ...plan.conditions[1], conditionId: cat.conditions.room, role: 'real_time' }],
    });
    expect(mild.body.preview.cautions).toEqual([]);
  });

  it('starts a study: samples with unique codes and dated checkpoints, in one go, audited', async () => {
    const s = await draft();
    const res = await formulator.post(`/api/studies/${s.id}/start`);
    expect(res.status).toBe(200);
    const study = res.body.study;
    expect(study.status).toBe('running');
    expect(study.samples).toHaveLength(6);
    expect(new Set(study.samples.map((x: { code: string }) => x.code)).size).toBe(6);
    for (const x of study.samples) expect(x.code).toMatch(/^[2-9A-HJKMNP-TV-Z]{6}$/);
    // One initial test for the study (its samples: one retained sample per batch), then 2 pulls per condition.
    expect(study.samples.filter((x: { studyConditionId: number | null }) => x.studyConditionId == null)).toHaveLength(2);
    expect(study.checkpoints).toHaveLength(5);
    expect(study.checkpoints[0]).toMatchObject({ kind: 'initial', label: 'Initial', studyConditionId: null, dueDate: '2026-11-02', expected: 6 });
    const audits = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'study'), eq(auditLog.entityId, String(s.id))));
    expect(audits.map((a) => a.reason)).toContain('Study started');
  });

  it('two starts at once create one set of samples', async () => {
    const s = await draft();
    const [a, b] = await Promise.all([formulator.post(`/api/studies/${s.id}/start`), owner.post(`/api/studies/${s.id}/start`)]);
    expect([a.status, b.status].sort()).toEqual([200, 409]);
    const [row] = await t.db.select({ n: sql<number>`count(*)` }).from(samples).where(eq(samples.studyId, s.id));
    expect(Number(row.n)).toBe(6);
    const [cps] = await t.db.select({ n: sql<number>`count(*)` }).from(checkpoints).where(eq(checkpoints.studyId, s.id));
    expect(Number(cps.n)).toBe(5);
  });

  it('freeze-thaw checkpoints are dated by cycle length (24 h + 24 h)', async () => {
    const plan = planFor(cat);
    plan.conditions = [
      plan.conditions[0],
      { conditionId: cat.conditions.freezeThaw, role: 'stress' as never, template: 'freeze-thaw-5', offsets: [{ unit: 'cycle' as never, n: 1 }, { unit: 'cycle' as never, n: 5 }] },
    ];
    const s = await draft(plan);
    const res = await formulator.post(`/api/studies/${s.id}/start`);
    const ft = res.body.study.checkpoints.filter((c: { label: string }) => c.label.startsWith('Cycle'));
    expect(ft.map((c: { dueDate: string }) => c.dueDate)).toEqual(['2026-11-04', '2026-11-12']);
  });

  it('a started plan cannot be edited, only amended', async () => {
    const s = await draft();
    await formulator.post(`/api/studies/${s.id}/start`);
    const res = await formulator.put(`/api/studies/${s.id}`, planFor(cat));
    expect(res.status).toBe(409);
  });
});

describe('bad plans', () => {
  it('names the missing parts: no batches, no conditions, no attributes', async () => {
    const res = await formulator.post('/api/studies', { ...planFor(cat), batchIds: [], conditions: [], attributes: [] });
    expect(res.status).toBe(400);
    expect(Object.keys(res.body.error.fields).sort()).toEqual(['attributes', 'batchIds', 'conditions']);
  });

  it('refuses a criterion whose min exceeds its max, naming it', async () => {
    const plan = planFor(cat);
    plan.attributes[0] = { attributeId: cat.attributeIds.ph, criterion: { kind: 'range', min: 6, max: 5 } as never };
    const res = await formulator.post('/api/studies', plan);
    expect(res.status).toBe(400);
    expect(res.body.error.fields['attributes.0.criterion.min']).toMatch(/exceeds/);
  });

  it('refuses a checkpoint before day 0', async () => {
    const plan = planFor(cat);
    plan.conditions[0].offsets = [{ unit: 'week', n: -1 }];
    const res = await formulator.post('/api/studies', plan);
    expect(res.status).toBe(400);
    expect(res.body.error.fields['conditions.0.offsets.0.n']).toMatch(/before day 0/);
  });

  it('refuses a batch of another product and a batch of another lab', async () => {
    const other = await makeCatalogue(t.db, t.labs[0].id, 'Second product');
    const plan = planFor(cat);
    plan.batchIds = [cat.batchIds[0], other.batchIds[0], otherCat.batchIds[0]];
    const res = await formulator.post('/api/studies', plan);
    expect(res.status).toBe(400);
    expect(res.body.error.fields['batchIds.1']).toMatch(/another product/);
    expect(res.body.error.fields['batchIds.2']).toMatch(/No such batch/);
  });

  it('refuses a criterion that does not fit the attribute kind, and cycle checkpoints on a constant condition', async () => {
    const plan = planFor(cat);
    plan.attributes[1] = { attributeId: cat.attributeIds.separation, criterion: { kind: 'change_pct', max: 10 } as never };
    plan.conditions[1].offsets = [{ unit: 'cycle' as never, n: 1 }];
    const res = await formulator.post('/api/studies', plan);
    expect(res.status).toBe(400);
    expect(res.body.error.fields).toHaveProperty(['attributes.1.criterion.kind']);
    expect(res.body.error.fields).toHaveProperty(['conditions.1.offsets.0.unit']);
  });

  it('a technician cannot plan, preview, start or amend; nothing is created', async () => {
    const s = await draft();
    expect((await technician.post('/api/studies', planFor(cat))).status).toBe(403);
    expect((await technician.post('/api/studies/preview', planFor(cat))).status).toBe(403);
    expect((await technician.post(`/api/studies/${s.id}/start`)).status).toBe(403);
    expect((await technician.post(`/api/studies/${s.id}/amendments`, { kind: 'cancel', reason: 'not mine' })).status).toBe(403);
    const [row] = await t.db.select({ status: studies.status }).from(studies).where(eq(studies.id, s.id));
    expect(row.status).toBe('draft');
  });

  it("another lab's owner gets 404 on the study, its labels, samples and checkpoints", async () => {
    const s = await draft();
    const started = await formulator.post(`/api/studies/${s.id}/start`);
    const code = started.body.study.samples[0].code;
    const cpId = started.body.study.checkpoints[0].id;
    expect((await otherOwner.get(`/api/studies/${s.id}`)).status).toBe(404);
    expect((await otherOwner.get(`/api/studies/${s.id}/labels`)).status).toBe(404);
    expect((await otherOwner.get(`/api/samples/${code}`)).status).toBe(404);
    expect((await otherOwner.post(`/api/checkpoints/${cpId}/missed`, { reason: 'foreign' })).status).toBe(404);
    expect((await otherOwner.post(`/api/studies/${s.id}/amendments`, { kind: 'cancel', reason: 'foreign' })).status).toBe(404);
    // and a plan in the other lab cannot use this lab's product
    const foreign = await otherOwner.post('/api/studies', planFor(cat));
    expect(foreign.status).toBe(404);
    expect(foreign.body.error.fields).toHaveProperty('productId');
  });
});

describe('amendments', () => {
  it('adds a checkpoint, ends a condition early and cancels, each with a reason kept', async () => {
    const s = await draft();
    const started = (await formulator.post(`/api/studies/${s.id}/start`)).body.study;
    const [fridge, oven] = started.conditions;
    const noReason = await formulator.post(`/api/studies/${s.id}/amendments`, { kind: 'add_checkpoint', studyConditionId: oven.id, offset: { unit: 'week', n: 8 } });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields).toHaveProperty('reason');

    const add = await formulator.post(`/api/studies/${s.id}/amendments`, {
      kind: 'add_checkpoint',
      studyConditionId: oven.id,
      offset: { unit: 'week', n: 8 },
      reason: 'Separation risk: look at week 8 too',
    });
    expect(add.status).toBe(201);
    expect(add.body.study.checkpoints.find((c: { label: string; studyConditionId: number }) => c.label === 'Week 8' && c.studyConditionId === oven.id).dueDate).toBe('2026-12-28');

    const end = await formulator.post(`/api/studies/${s.id}/amendments`, {
      kind: 'end_condition',
      studyConditionId: fridge.id,
      endedOn: '2026-11-10',
      reason: 'Fridge failed; samples discarded',
    });
    expect(end.status).toBe(201);
    const fridgeCps = end.body.study.checkpoints.filter((c: { studyConditionId: number }) => c.studyConditionId === fridge.id);
    expect(fridgeCps.find((c: { label: string }) => c.label === 'Week 4').state).toBe('cancelled');
    expect(fridgeCps.find((c: { label: string }) => c.label === 'Week 1').state).not.toBe('cancelled');

    const cancel = await formulator.post(`/api/studies/${s.id}/amendments`, { kind: 'cancel', reason: 'Formula withdrawn' });
    expect(cancel.body.study.status).toBe('cancelled');
    expect(cancel.body.study.cancelledReason).toBe('Formula withdrawn');
    expect(cancel.body.study.amendments.map((a: { kind: string }) => a.kind)).toEqual(['add_checkpoint', 'end_condition', 'cancel']);
    const again = await formulator.post(`/api/studies/${s.id}/amendments`, { kind: 'other', reason: 'after cancel' });
    expect(again.status).toBe(409);
  });
});

describe('Bench and missed windows', () => {
  it('shows due, overdue and upcoming checkpoints grouped by location; a closed window can be marked missed', async () => {
    const today = labToday();
    const plan = planFor(cat, addDays(today, -10));
    plan.title = 'Bench study';
    plan.conditions[0].offsets = [{ unit: 'day', n: 10 }, { unit: 'day', n: 13 }, { unit: 'day', n: 30 }];
    plan.conditions[1].offsets = [{ unit: 'day', n: 30 }];
    const s = await draft(plan);
    await formulator.post(`/api/studies/${s.id}/start`);

    const res = await technician.get('/api/bench?days=7');
    expect(res.status).toBe(200);
    const mine = res.body.groups.flatMap((g: { location: string; conditions: { checkpoints: { study: { id: number }; state: string; label: string }[] }[] }) =>
      g.conditions.flatMap((c) => c.checkpoints.filter((cp) => cp.study.id === s.id).map((cp) => ({ location: g.location, ...cp }))),
    );
    const byLabel = Object.fromEntries(mine.map((m: { label: string }) => [m.label, m]));
    expect(byLabel['Initial'].state).toBe('overdue'); // the initial test's window closed 9 days ago
    expect(byLabel['Initial'].location).toBe('Initial test (before storage)');
    expect(byLabel['Initial'].samples).toHaveLength(2); // the retained samples, one per batch
    expect(byLabel['Day 10'].state).toBe('due');
    expect(byLabel['Day 13'].state).toBe('upcoming');
    expect(byLabel['Day 30']).toBeUndefined(); // beyond the next 7 days
    expect(byLabel['Day 10'].location).toBe('fridge 1');
    expect(byLabel['Day 10'].samples).toHaveLength(2);
    expect(byLabel['Day 10'].toRecord).toBe(6); // 2 samples x 3 attributes

    const tooEarly = await technician.post(`/api/checkpoints/${byLabel['Day 10'].id}/missed`, { reason: 'Oven was busy' });
    expect(tooEarly.status).toBe(409);
    const missed = await technician.post(`/api/checkpoints/${byLabel['Initial'].id}/missed`, { reason: 'Lab closed for flooding' });
    expect(missed.status).toBe(200);
    expect(missed.body.checkpoint).toMatchObject({ state: 'missed', missedReason: 'Lab closed for flooding' });
    const noReason = await technician.post(`/api/checkpoints/${byLabel['Day 10'].id}/missed`, {});
    expect(noReason.status).toBe(400);
  });

  it('validates the Bench query', async () => {
    expect((await technician.get('/api/bench?days=400')).status).toBe(400);
    expect((await technician.get('/api/bench?today=yesterday')).status).toBe(400);
  });
});

describe('labels and the sample page', () => {
  it('gives one label per sample with a link to its page, and the sample page answers by code', async () => {
    const s = await draft();
    const study = (await formulator.post(`/api/studies/${s.id}/start`)).body.study;
    const res = await technician.get(`/api/studies/${s.id}/labels`);
    expect(res.status).toBe(200);
    expect(res.body.labels).toHaveLength(6);
    expect(res.body.labels.slice(0, 2).map((l: { condition: string }) => l.condition)).toEqual(['Initial test · retained', 'Initial test · retained']);
    const first = res.body.labels[2];
    expect(first.url).toMatch(new RegExp(`/samples/${first.code}$`));
    expect(first).toMatchObject({ lotCode: expect.stringMatching(/^T\d+-A$/), startDate: '2026-11-02' });
    const page = await technician.get(`/api/samples/${first.code.toLowerCase()}`);
    expect(page.status).toBe(200);
    expect(page.body.sample.checkpoints).toHaveLength(2);
    const retained = await technician.get(`/api/samples/${res.body.labels[0].code}`);
    expect(retained.body.sample).toMatchObject({ retained: true, condition: null });
    expect(retained.body.sample.checkpoints.map((c: { label: string }) => c.label)).toEqual(['Initial']);
    expect(page.body.sample.study.id).toBe(study.id);
    expect((await technician.get('/api/samples/ZZZZZZ')).status).toBe(404);
  });
});
