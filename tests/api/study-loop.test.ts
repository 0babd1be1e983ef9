/**
 * Studies as a lab runs them: one initial test per batch (the baseline of every condition), a control
 * reading paired with every pull on the same day, and out-of-specification (OOS) handling from the
 * bench to the review. The working practice tested here is common practice with no published source.
 */
import { and, asc, eq, inArray, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { auditLog, checkpoints, notifications, observationRevisions, observations, oosInvestigations, samples, studies, studyAttributes, studyBatches, studyConditions } from '../../server/db/schema';
import { runDataMigrations } from '../../server/db/data-migrations';
import { addDays, localDateInZone, type Offset } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;
const today = () => localDateInZone(new Date(), 'Europe/Berlin');

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([t.signIn(DEMO.owner), t.signIn(DEMO.formulator), t.signIn(DEMO.technician), t.signIn(DEMO.otherOwner)]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
});
afterAll(async () => t?.close());

interface Study {
  id: number;
  startDate: string;
  samples: { id: number; code: string; studyConditionId: number | null; batchId: number; replicate: number }[];
  checkpoints: { id: number; label: string; kind: string; studyConditionId: number | null; controlCheckpointId: number | null; dueDate: string; state: string; expected: number }[];
  conditions: { id: number; role: string; name: string }[];
  attributes: { id: number; code: string }[];
  investigations: { id: number; status: string; benchStep: string }[];
}

const w = (n: number): Offset => ({ unit: 'week', n });
const m = (n: number): Offset => ({ unit: 'month', n });
const c = (n: number): Offset => ({ unit: 'cycle', n });

/** The plan the issue tried: four conditions (control, 45 °C, real time, freeze-thaw), two batches. */
function fourConditionPlan(startDate: string) {
  const plan = planFor(cat, startDate);
  plan.conditions = [
    { conditionId: cat.conditions.fridge, role: 'control', template: 'accelerated-12w', offsets: [w(1), w(2), w(4), w(8), w(12)] },
    { conditionId: cat.conditions.oven45, role: 'accelerated', template: 'custom', offsets: [w(1), w(2), w(4), w(6), w(8), w(12)] },
    { conditionId: cat.conditions.room, role: 'real_time', template: 'real-time-36m', offsets: [m(3), m(6), m(9), m(12), m(18), m(24), m(36)] },
    { conditionId: cat.conditions.freezeThaw, role: 'stress', template: 'freeze-thaw-5', offsets: [c(1), c(3), c(5)] },
  ] as never;
  plan.attributes = [
    { attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } },
    { attributeId: cat.attributeIds.viscosity, criterion: { kind: 'change_pct', max: 20 } },
    { attributeId: cat.attributeIds.separation, criterion: { kind: 'worst_grade', grade: 1 } },
    { attributeId: cat.attributeIds.odor, criterion: { kind: 'worst_compared', level: 'slight' } },
    { attributeId: cat.attributeIds.color, criterion: { kind: 'worst_compared', level: 'slight' } },
  ] as never;
  return plan;
}

async function started(plan: object): Promise<Study> {
  const draft = await formulator.post('/api/studies', plan);
  expect(draft.status, JSON.stringify(draft.body)).toBe(201);
  const res = await formulator.post(`/api/studies/${draft.body.study.id}/start`);
  expect(res.status, JSON.stringify(res.body)).toBe(200);
  return res.body.study;
}

const put = (cl: Client, code: string, cpId: number, entries: object[]) => cl.put(`/api/samples/${code}/checkpoints/${cpId}/observations`, { entries });
const attr = (s: Study, code: string) => s.attributes.find((a) => a.code === code)!.id;
const cond = (s: Study, role: string) => s.conditions.find((x) => x.role === role)!;
const pull = (s: Study, role: string, label: string) => s.checkpoints.find((x) => x.studyConditionId === cond(s, role).id && x.label === label)!;
const initial = (s: Study) => s.checkpoints.find((x) => x.kind === 'initial')!;
const retained = (s: Study, batchId: number) => s.samples.find((x) => x.studyConditionId == null && x.batchId === batchId)!;
const sampleOf = (s: Study, role: string, batchId: number) => s.samples.find((x) => x.studyConditionId === cond(s, role).id && x.batchId === batchId)!;

describe('one initial test per batch', () => {
  it('the preview of a four-condition, two-batch plan asks for one initial test per batch, and says what it saves', async () => {
    const res = await formulator.post('/api/studies/preview', fourConditionPlan('2026-11-02'));
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    const p = res.body.preview;
    // 2 batches x 1 sample x 5 attributes = 10 readings per set.
    expect(p.initial).toEqual({ label: 'Initial', dueDate: '2026-11-02', windowEnd: '2026-11-03', samples: 2 });
    expect(p.readings.initial).toBe(10);
    // A day 0 in each of the 4 conditions would have asked for 40; one initial test asks for 10.
    expect(p.readings.perConditionDayZero).toBe(40);
    expect(p.readings.saved).toBe(30);
    expect(p.readings.total).toBe(p.readings.initial + p.readings.pulls);
    expect(p.perCondition.every((pc: { checkpoints: { label: string }[] }) => !pc.checkpoints.some((x) => x.label === 'Day 0'))).toBe(true);
  });

  it('refuses a day 0 in a storage condition (the initial test is the day 0), but keeps a centrifuge test at the start', async () => {
    const plan = fourConditionPlan('2026-11-02');
    plan.conditions[1].offsets = [{ unit: 'day', n: 0 }, w(1)] as never;
    const res = await formulator.post('/api/studies', plan);
    expect(res.status).toBe(400);
    expect(res.body.error.fields['conditions.1.offsets.0']).toMatch(/initial test/);
  });

  it('starting makes one initial checkpoint for the study and one retained sample per batch; every condition starts from it', async () => {
    const s = await started(fourConditionPlan(addDays(today(), -1)));
    const init = s.checkpoints.filter((x) => x.kind === 'initial');
    expect(init).toHaveLength(1);
    expect(init[0]).toMatchObject({ label: 'Initial', studyConditionId: null, dueDate: s.startDate, expected: 10 });
    expect(s.samples.filter((x) => x.studyConditionId == null).map((x) => x.batchId).sort()).toEqual([...cat.batchIds].sort());
    expect(s.checkpoints.some((x) => x.kind === 'pull' && x.label === 'Day 0')).toBe(false);

    // The initial readings are each batch's baseline: a change criterion at 45 °C is judged from them.
    const [bA, bB] = cat.batchIds;
    for (const [b, ph] of [[bA, 5.5], [bB, 5.2]] as const) {
      const r = await put(technician, retained(s, b).code, initial(s).id, [
        { studyAttributeId: attr(s, 'ph'), value: ph },
        { studyAttributeId: attr(s, 'viscosity'), value: 20000 },
        { studyAttributeId: attr(s, 'separation'), value: 0 },
        { studyAttributeId: attr(s, 'odor'), value: 'no_change' },
        { studyAttributeId: attr(s, 'color'), value: 'no_change' },
      ]);
      expect(r.status, JSON.stringify(r.body)).toBe(200);
    }
    const detail = (await formulator.get(`/api/studies/${s.id}`)).body.study as Study;
    expect(initial(detail).state).toBe('done');
    // Cycle 1 of freeze-thaw (48 h) is due tomorrow: a formulator records it early for batch B, pH 5.6.
    const ft = sampleOf(s, 'stress', bB);
    const r = await formulator.put(`/api/samples/${ft.code}/checkpoints/${pull(s, 'stress', 'Cycle 1').id}/observations`, { entries: [{ studyAttributeId: attr(s, 'ph'), value: 5.6 }], allowEarly: true });
    expect(r.status, JSON.stringify(r.body)).toBe(200);
    const phRow = r.body.sheet.attributes.find((a: { attribute: { code: string } }) => a.attribute.code === 'ph');
    // Batch B's initial pH is 5.2, not batch A's 5.5: 5.6 is 0.4 from it and passes.
    expect(phRow.baseline).toEqual({ value: 5.2, label: 'Initial', sampleCode: retained(s, bB).code });
    expect(phRow.current.verdict).toBe('pass');

    // The analysis: the initial readings are t = 0 of every condition's chart for their batch.
    const analysis = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis;
    for (const co of s.conditions) {
      const series = analysis.series.filter((x: { studyAttributeId: number; studyConditionId: number }) => x.studyAttributeId === attr(s, 'ph') && x.studyConditionId === co.id);
      expect(series.length, co.name).toBe(2);
      for (const x of series) expect(x.points[0]).toMatchObject({ months: 0, label: 'Initial' });
    }
    // Limits of a change criterion come from the mean initial reading of the variant.
    const limitA = analysis.limits.find((l: { studyAttributeId: number; variantId: number }) => l.studyAttributeId === attr(s, 'ph') && l.variantId === cat.variantIds[0]);
    expect(limitA.limit.lower).toBeCloseTo(5.0, 10);
    expect(limitA.limit.upper).toBeCloseTo(6.0, 10);
  });
});

describe('colour difference from the initial test, per sample', () => {
  it('every replicate keeps its own readings, each measured from its batch\'s initial test (CIEDE2000, Sharma 2005 formula via culori)', async () => {
    const plan = planFor(cat, addDays(today(), -7));
    plan.samplesPerCell = 2;
    plan.conditions = [plan.conditions[1]] as never; // the 45 °C oven alone
    plan.attributes = ['color_l', 'color_a', 'color_b'].map((code) => ({ attributeId: cat.attributeIds[code], criterion: { kind: 'none' } })) as never;
    const s = await started(plan);
    const lab = (L: number, a: number, b: number) => [
      { studyAttributeId: attr(s, 'color_l'), value: L },
      { studyAttributeId: attr(s, 'color_a'), value: a },
      { studyAttributeId: attr(s, 'color_b'), value: b },
    ];
    for (const r of s.samples.filter((x) => x.studyConditionId == null)) expect((await put(technician, r.code, initial(s).id, lab(50, 2.6772, -79.7751))).status).toBe(200);
    const oven = s.samples.filter((x) => x.studyConditionId != null && x.batchId === cat.batchIds[0]);
    expect(oven).toHaveLength(2);
    // The first Sharma, Wu & Dalal 2005 pair: ΔE00 = 2.0425 from (50, 2.6772, -79.7751) to (50, 0, -82.7485).
    for (const o of oven) expect((await put(technician, o.code, pull(s, 'accelerated', 'Week 1').id, lab(50, 0, -82.7485))).status).toBe(200);
    const a = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis;
    for (const o of oven) {
      const de = a.deltaE.find((x: { sampleCode: string }) => x.sampleCode === o.code);
      expect(de.points.map((p: { label: string }) => p.label)).toEqual(['Initial', 'Week 1']);
      expect(de.points[1].de00).toBeCloseTo(2.0425, 4);
    }
  });
});

describe('a control read beside every pull', () => {
  it('pairs every pull with a same-day control reading, one serving every pull due that day, and extends the control to the last pull', async () => {
    const res = await formulator.post('/api/studies/preview', fourConditionPlan('2026-11-02'));
    const p = res.body.preview;
    const control = p.perCondition[0];
    // The control's own schedule ends at week 12; week 6 (45 °C), the months (real time) and the cycles get control readings added.
    const labels = control.checkpoints.map((x: { label: string }) => x.label);
    expect(labels).toEqual(['Day 2', 'Day 6', 'Week 1', 'Day 10', 'Week 2', 'Week 4', 'Week 6', 'Week 8', 'Week 12', 'Month 3', 'Month 6', 'Month 9', 'Month 12', 'Month 18', 'Month 24', 'Month 36']);
    const w1 = control.checkpoints.find((x: { label: string }) => x.label === 'Week 1');
    expect(w1.added).toBe(false);
    expect(w1.serves).toEqual([expect.stringMatching(/^45 °C \d+ Week 1$/)]);
    expect(control.checkpoints.find((x: { label: string }) => x.label === 'Month 36').added).toBe(true);
    for (const pc of p.perCondition.slice(1)) {
      for (const x of pc.checkpoints) expect(x.controlDate, `${pc.name} ${x.label}`).toBe(x.dueDate);
    }
    expect(p.readings.addedControl).toBe(11 * 10);
    expect(p.warnings.join(' ')).toMatch(/own schedule ends at Week 12 \(2027-01-25\), before the pulls it serves \(to 25 °C \/ 60 % RH \d+ Month 36, 2029-11-02\): 11 control readings are added/);
  });

  it('warns about pulls without a control reading, and refuses turning pairing off without a reason', async () => {
    const plan = fourConditionPlan('2026-11-02');
    (plan.conditions[3] as Record<string, unknown>).pairControl = false;
    const noReason = await formulator.post('/api/studies/preview', plan);
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields['conditions.3.pairingOffReason']).toMatch(/Say why/);
    (plan.conditions[3] as Record<string, unknown>).pairingOffReason = 'Freeze-thaw jars are compared with each other, not the fridge';
    const res = await formulator.post('/api/studies/preview', plan);
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.preview.warnings.join(' ')).toMatch(/Freeze-thaw \d+: Cycle 1, Cycle 3, Cycle 5 have no same-day control reading \(pairing turned off: Freeze-thaw jars/);
    const noControl = { ...plan, conditions: plan.conditions.slice(1) };
    expect((await formulator.post('/api/studies/preview', noControl)).body.preview.warnings.join(' ')).toMatch(/No control condition/);
  });

  it('started: each pull points at the control checkpoint of its day; the Bench lists the control with the pulls it belongs to', async () => {
    const s = await started(fourConditionPlan(addDays(today(), -7)));
    const byId = new Map(s.checkpoints.map((x) => [x.id, x]));
    for (const x of s.checkpoints.filter((y) => y.kind === 'pull' && y.studyConditionId !== cond(s, 'control').id)) {
      const ctl = byId.get(x.controlCheckpointId!);
      expect(ctl, x.label).toBeTruthy();
      expect(ctl!.studyConditionId).toBe(cond(s, 'control').id);
      expect(ctl!.dueDate).toBe(x.dueDate);
    }
    const bench = (await technician.get('/api/bench?days=7')).body;
    const ctlCps = bench.groups.flatMap((g: { conditions: { role: string; checkpoints: { study: { id: number }; label: string; serves: string[] }[] }[] }) =>
      g.conditions.filter((co) => co.role === 'control').flatMap((co) => co.checkpoints.filter((x) => x.study.id === s.id)),
    );
    const week1 = ctlCps.find((x: { label: string }) => x.label === 'Week 1');
    expect(week1.serves).toEqual([`${cond(s, 'accelerated').name} Week 1`]);
  });

  it('pairing by hand: only a control reading of the same study and batch, with a reason', async () => {
    const s = await started(fourConditionPlan(addDays(today(), -7)));
    const other = await started(fourConditionPlan(addDays(today(), -7)));
    const oven1 = pull(s, 'accelerated', 'Week 1');
    const amend = (body: object) => formulator.post(`/api/studies/${s.id}/amendments`, { kind: 'pair_control', reason: 'Control read a day late', ...body });
    const foreign = await amend({ checkpointId: oven1.id, controlCheckpointId: pull(other, 'control', 'Week 2').id });
    expect(foreign.status).toBe(400);
    expect(foreign.body.error.fields.controlCheckpointId).toMatch(/Not a control reading of this study/);
    const notControl = await amend({ checkpointId: oven1.id, controlCheckpointId: pull(s, 'real_time', 'Month 3').id });
    expect(notControl.status).toBe(400);
    expect(notControl.body.error.fields.controlCheckpointId).toMatch(/control condition or the initial test/);
    const noReason = await formulator.post(`/api/studies/${s.id}/amendments`, { kind: 'pair_control', checkpointId: oven1.id, controlCheckpointId: pull(s, 'control', 'Week 2').id });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields).toHaveProperty('reason');
    // Another batch: a control checkpoint whose control samples do not include the pull's batches.
    const batchA = cat.batchIds[0];
    await t.db.delete(samples).where(and(eq(samples.studyConditionId, cond(s, 'control').id), eq(samples.batchId, batchA)));
    const otherBatch = await amend({ checkpointId: oven1.id, controlCheckpointId: pull(s, 'control', 'Week 2').id });
    expect(otherBatch.status).toBe(400);
    expect(otherBatch.body.error.fields.controlCheckpointId).toMatch(/same batch/);
    // Nothing partial kept: the pull is still paired with its own day, and no amendment was written.
    const [row] = await t.db.select({ c: checkpoints.controlCheckpointId }).from(checkpoints).where(eq(checkpoints.id, oven1.id));
    expect(row.c).toBe(pull(s, 'control', 'Week 1').id);
    const detail = (await formulator.get(`/api/studies/${s.id}`)).body.study;
    expect(detail.amendments).toEqual([]);
    const ok = await formulator.post(`/api/studies/${other.id}/amendments`, { kind: 'pair_control', reason: 'Control read a day late', checkpointId: pull(other, 'accelerated', 'Week 1').id, controlCheckpointId: pull(other, 'control', 'Week 2').id });
    expect(ok.status, JSON.stringify(ok.body)).toBe(201);
    expect(ok.body.study.checkpoints.find((x: { id: number }) => x.id === pull(other, 'accelerated', 'Week 1').id).controlCheckpointId).toBe(pull(other, 'control', 'Week 2').id);
  });
});

describe('out of specification', () => {
  let s: Study;
  let invId: number;
  const bA = () => cat.batchIds[0];

  beforeAll(async () => {
    s = await started(fourConditionPlan(addDays(today(), -7)));
    for (const b of cat.batchIds) {
      await put(technician, retained(s, b).code, initial(s).id, [
        { studyAttributeId: attr(s, 'ph'), value: 5.5 },
        { studyAttributeId: attr(s, 'viscosity'), value: 20000 },
        { studyAttributeId: attr(s, 'separation'), value: 0 },
        { studyAttributeId: attr(s, 'odor'), value: 'no_change' },
        { studyAttributeId: attr(s, 'color'), value: 'no_change' },
      ]);
    }
  });

  it('a failing reading opens an investigation, unconfirmed, and the study\'s formulator is told', async () => {
    const before = await t.db.select({ n: sql<number>`count(*)` }).from(notifications);
    const res = await put(technician, sampleOf(s, 'accelerated', bA()).code, pull(s, 'accelerated', 'Week 1').id, [{ studyAttributeId: attr(s, 'ph'), value: 4.8 }]);
    expect(res.status).toBe(200);
    const ph = res.body.sheet.attributes.find((a: { attribute: { code: string } }) => a.attribute.code === 'ph').current;
    expect(ph.verdict).toBe('fail');
    expect(ph.investigation).toMatchObject({ status: 'open', benchStep: 'unconfirmed', remeasure: null, conclusion: null });
    invId = ph.investigation.id;
    const after = await t.db.select({ n: sql<number>`count(*)` }).from(notifications);
    expect(Number(after[0].n)).toBe(Number(before[0].n) + 1);
    const mine = (await formulator.get('/api/notifications')).body;
    expect(mine.unread).toBeGreaterThan(0);
    expect(mine.items[0]).toMatchObject({ kind: 'oos', link: `/studies/${s.id}?tab=investigations`, read: false });
    expect(mine.items[0].text).toMatch(/Out of specification/);
    expect((await technician.get('/api/notifications')).body.unread).toBe(0);
    // Marked unconfirmed on the Bench and the study.
    const bench = (await technician.get('/api/bench?days=7')).body;
    const samplesOnBench = bench.groups.flatMap((g: { conditions: { checkpoints: { id: number; samples: { code: string; unconfirmed: number }[] }[] }[] }) =>
      g.conditions.flatMap((co) => co.checkpoints.filter((x) => x.id === pull(s, 'accelerated', 'Week 1').id).flatMap((x) => x.samples)),
    );
    expect(samplesOnBench.find((x: { code: string }) => x.code === sampleOf(s, 'accelerated', bA()).code).unconfirmed).toBe(1);
    const list = (await formulator.get('/api/studies')).body.studies.find((x: { id: number }) => x.id === s.id);
    expect(list).toMatchObject({ openInvestigations: 1, unconfirmed: 1 });
  });

  it('re-measured at the bench: a second reading kept beside the first, both in the history; then confirmed with a comment', async () => {
    const re = await technician.post(`/api/investigations/${invId}/remeasure`, { value: 4.85, comment: 'Fresh buffer, electrode rinsed' });
    expect(re.status, JSON.stringify(re.body)).toBe(200);
    expect(re.body.investigation).toMatchObject({ benchStep: 'remeasured', remeasure: { value: 4.85, verdict: 'fail' }, failed: { value: 4.8 } });
    expect((await technician.post(`/api/investigations/${invId}/remeasure`, { value: 4.9 })).status).toBe(409);
    const [obs] = await t.db.select().from(observations).where(eq(observations.id, (await t.db.select().from(oosInvestigations).where(eq(oosInvestigations.id, invId)))[0].observationId));
    expect(obs.valueNum).toBe(4.8); // the first reading stays the result until the investigation decides
    const history = (await technician.get(`/api/observations/${obs.id}/history`)).body.history;
    expect(history.map((h: { value: number; change: string | null }) => [h.value, h.change])).toEqual([[4.8, null], [4.85, 'remeasure']]);
    const short = await technician.post(`/api/investigations/${invId}/confirm`, { comment: 'ok' });
    expect(short.status).toBe(400);
    expect(short.body.error.fields).toHaveProperty('comment');
    const conf = await technician.post(`/api/investigations/${invId}/confirm`, { comment: 'Two readings agree; the jar looks normal' });
    expect(conf.body.investigation).toMatchObject({ benchStep: 'confirmed', status: 'open' });
  });

  it('open investigations block submitting for review', async () => {
    const res = await formulator.post(`/api/studies/${s.id}/submit`, {
      summary: 'Early look.',
      proposals: cat.variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 6 })),
      openCheckpointsReason: 'Ending early for the test',
    });
    expect(res.status).toBe(409);
    expect(res.body.error.fields.investigations).toMatch(/1 open/);
    const [row] = await t.db.select({ status: studies.status }).from(studies).where(eq(studies.id, s.id));
    expect(row.status).toBe('running');
  });

  it('closing: formulators and owners only, with checks and a conclusion; invalidating needs a reason and a valid re-test', async () => {
    const checks = { instrument: 'Meter calibrated this morning at 4, 7, 10', method: 'Neat reading, as at the initial test', sample: 'Right jar, well mixed', calculation: 'None: direct reading' };
    expect((await technician.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'confirmed', reason: 'Real drift' })).status).toBe(403);
    const noConclusion = await formulator.post(`/api/investigations/${invId}/close`, { checks, reason: 'Looked at it' });
    expect(noConclusion.status).toBe(400);
    expect(noConclusion.body.error.fields).toHaveProperty('conclusion');
    const noRetest = await formulator.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'invalidated', reason: 'Buffer was expired' });
    expect(noRetest.status).toBe(400);
    expect(noRetest.body.error.fields).toHaveProperty(['retest.value']);
    const noReason = await formulator.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'invalidated', retest: { value: 5.45 } });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields).toHaveProperty('reason');
    const noChecks = await formulator.post(`/api/investigations/${invId}/close`, { conclusion: 'confirmed', reason: 'Real' });
    expect(noChecks.body.error.fields).toHaveProperty('checks');
    expect((await otherOwner.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'confirmed', reason: 'Real drift' })).status).toBe(404);
    const [inv] = await t.db.select().from(oosInvestigations).where(eq(oosInvestigations.id, invId));
    expect(inv.status).toBe('open'); // nothing partial kept

    // Invalidated as a lab error with a valid re-test: the analysis uses the re-test; the original stays in the history and the audit trail.
    const closed = await formulator.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'invalidated', reason: 'The pH 7 buffer was expired; fresh buffer, recalibrated', retest: { value: 5.45 } });
    expect(closed.status, JSON.stringify(closed.body)).toBe(200);
    expect(closed.body.investigation).toMatchObject({ status: 'closed', conclusion: 'invalidated', retest: { value: 5.45, verdict: 'pass' }, valueUsed: 5.45, closed: { by: 'Theo Okafor' } });
    const [obs] = await t.db.select().from(observations).where(eq(observations.id, inv.observationId));
    expect(obs).toMatchObject({ valueNum: 5.45, verdict: 'pass', version: 2 });
    const [rev] = await t.db.select().from(observationRevisions).where(eq(observationRevisions.observationId, obs.id));
    expect(rev).toMatchObject({ valueNum: 4.8, verdict: 'fail', change: 'invalidated' });
    const trail = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'oos_investigation'), eq(auditLog.entityId, String(invId)))).orderBy(asc(auditLog.id));
    expect(trail.map((a) => a.action)).toEqual(['create', 'remeasure', 'confirm', 'close']);
    const analysis = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis;
    const pt = analysis.series
      .filter((x: { studyAttributeId: number; studyConditionId: number; batchId: number }) => x.studyAttributeId === attr(s, 'ph') && x.studyConditionId === cond(s, 'accelerated').id && x.batchId === bA())
      .flatMap((x: { points: { label: string; value: number }[] }) => x.points)
      .find((p: { label: string }) => p.label === 'Week 1');
    expect(pt.value).toBe(5.45);
    expect((await formulator.post(`/api/investigations/${invId}/close`, { checks, conclusion: 'confirmed', reason: 'again' })).status).toBe(409);
  });

  it('once closed, the study can be submitted; the review lists every investigation with its conclusion', async () => {
    const res = await formulator.post(`/api/studies/${s.id}/submit`, {
      summary: 'Early look.',
      proposals: cat.variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 6 })),
      openCheckpointsReason: 'Ending early for the test',
    });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    const review = (await owner.get(`/api/studies/${s.id}/review`)).body.review;
    expect(review.investigations).toHaveLength(1);
    expect(review.investigations[0]).toMatchObject({ conclusion: 'invalidated', sampleCode: sampleOf(s, 'accelerated', bA()).code, attribute: { name: 'pH' } });
    const pdf = await owner.agent.get(`/api/studies/${s.id}/report.pdf`).buffer(true).parse((r, cb) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    expect(pdf.status).toBe(200);
  });

  it('the morning digest tells the formulator', async () => {
    const { buildDigest } = await import('../../jobs/digests');
    const lab = t.labs[0];
    const mail = await buildDigest(
      t.db,
      { id: lab.members[DEMO.formulator], name: 'Theo Okafor', email: DEMO.formulator, role: 'formulator', labId: lab.id, lab: { id: lab.id, name: lab.name, timeZone: 'Europe/Berlin', reminderHour: 7 } },
      today(),
      { link: (p) => `http://127.0.0.1:3000${p}` },
    );
    expect(mail?.text).toMatch(/Out-of-specification results in your studies/);
    expect(mail?.text).toMatch(/pH/);
  });
});

describe('existing studies: the migration to one initial test per batch keeps every value', () => {
  it('turns the per-condition day-0 checkpoints into the initial test, keeps the rest as extra readings, and loses nothing', async () => {
    // A study as started before the initial test existed: a day 0 in each condition, built straight in the database.
    const lab = t.labs[0];
    const start = addDays(today(), -10);
    const who = lab.members[DEMO.technician];
    const [{ id: studyId }] = await t.db.insert(studies).values({ labId: lab.id, productId: cat.productId, title: 'Legacy study', status: 'running', startDate: start, createdBy: lab.members[DEMO.formulator] }).$returningId();
    await t.db.insert(studyBatches).values(cat.batchIds.map((batchId) => ({ studyId, batchId, labId: lab.id })));
    const [{ id: saPh }] = await t.db.insert(studyAttributes).values({ labId: lab.id, studyId, attributeId: cat.attributeIds.ph, position: 0, criterion: { kind: 'change_abs', max: 0.5 } }).$returningId();
    const [{ id: saOdor }] = await t.db.insert(studyAttributes).values({ labId: lab.id, studyId, attributeId: cat.attributeIds.odor, position: 1, criterion: { kind: 'worst_compared', level: 'slight' } }).$returningId();
    const conds: number[] = [];
    for (const [i, [conditionId, role]] of ([[cat.conditions.fridge, 'control'], [cat.conditions.oven45, 'accelerated']] as const).entries()) {
      const [{ id }] = await t.db.insert(studyConditions).values({ labId: lab.id, studyId, conditionId, role, position: i, offsets: [{ unit: 'day', n: 0 }, w(1)] }).$returningId();
      conds.push(id);
    }
    const obsIds: number[] = [];
    const cpIds: Record<string, number> = {};
    let order = 0;
    for (const [ci, scId] of conds.entries()) {
      for (const [label, n, due] of [['Day 0', 0, start], ['Week 1', 1, addDays(start, 7)]] as const) {
        const [{ id }] = await t.db.insert(checkpoints).values({ labId: lab.id, studyId, studyConditionId: scId, offsetUnit: n ? 'week' : 'day', offsetN: n, label, dueDate: due, windowBefore: n ? 1 : 0, windowAfter: 1, status: n ? 'open' : 'done' }).$returningId();
        cpIds[`${ci}:${label}`] = id;
      }
      for (const batchId of cat.batchIds) {
        const [{ id: sampleId }] = await t.db.insert(samples).values({ labId: lab.id, studyId, batchId, studyConditionId: scId, code: `LG${ci}${batchId % 1000}`.slice(0, 12), replicate: 1, labelOrder: ++order }).$returningId();
        // Fridge day 0 recorded at 09:00 for both batches; oven day 0 at 10:00 for batch A only, and pH alone for batch B.
        const at = new Date(`${start}T${ci === 0 ? '09' : '10'}:00:00Z`);
        const rows = [
          { attr: saPh, num: 5.4 + ci * 0.1, text: null },
          { attr: saOdor, num: null, text: 'no_change' },
        ].filter((r) => !(ci === 1 && batchId === cat.batchIds[1] && r.attr === saOdor));
        for (const r of rows) {
          const [{ id }] = await t.db.insert(observations).values({ labId: lab.id, studyId, sampleId, checkpointId: cpIds[`${ci}:Day 0`], studyAttributeId: r.attr, valueNum: r.num, valueText: r.text, verdict: 'pass', recordedBy: who, recordedAt: at }).$returningId();
          obsIds.push(id);
        }
      }
    }
    // The 45 °C week 1 pull and the fridge's week 1 are on the same day.
    const before = await t.db.select().from(observations).where(inArray(observations.id, obsIds)).orderBy(asc(observations.id));

    await runDataMigrations(t.db);
    await runDataMigrations(t.db); // idempotent

    const after = await t.db.select().from(observations).where(inArray(observations.id, obsIds)).orderBy(asc(observations.id));
    // No recorded value is lost or changed: same rows, same values, who and when; only the checkpoint of the chosen sets changed.
    expect(after).toHaveLength(before.length);
    after.forEach((o, i) => expect({ ...o, checkpointId: 0 }).toEqual({ ...before[i], checkpointId: 0 }));
    const cps = await t.db.select().from(checkpoints).where(eq(checkpoints.studyId, studyId));
    const init = cps.filter((x) => x.kind === 'initial');
    expect(init).toHaveLength(1);
    expect(init[0]).toMatchObject({ studyConditionId: null, dueDate: start, status: 'done', label: 'Initial' });
    // The earliest complete set of each batch (the fridge's, at 09:00) became its initial readings: 2 batches x 2 attributes.
    expect(after.filter((o) => o.checkpointId === init[0].id)).toHaveLength(4);
    // The oven's day 0 stays as extra readings, visible on the study.
    const oven0 = cps.find((x) => x.id === cpIds['1:Day 0'])!;
    expect(oven0).toMatchObject({ kind: 'extra_day0', status: 'done' });
    expect(after.filter((o) => o.checkpointId === oven0.id)).toHaveLength(3);
    // The 45 °C week 1 is paired with the fridge's week 1.
    expect(cps.find((x) => x.id === cpIds['1:Week 1'])!.controlCheckpointId).toBe(cpIds['0:Week 1']);
    const [row] = await t.db.select().from(auditLog).where(and(eq(auditLog.action, 'migrate'), eq(auditLog.studyId, studyId)));
    expect(row.reason).toMatch(/no reading was deleted or changed in value/);
    expect((row.newValue as { moved: unknown[]; extraReadings: unknown[] }).moved).toHaveLength(2);
    expect((row.newValue as { extraReadings: { readings: number }[] }).extraReadings).toEqual([{ condition: expect.any(String), readings: 3 }]);
    // The oven's week 1 is now judged from the initial test of its batch.
    const ovenSample = (await t.db.select().from(samples).where(and(eq(samples.studyConditionId, conds[1]), eq(samples.batchId, cat.batchIds[0]))))[0];
    const sheet = (await technician.get(`/api/samples/${ovenSample.code}/checkpoints/${cpIds['1:Week 1']}`)).body.sheet;
    expect(sheet.attributes[0].baseline).toMatchObject({ value: 5.4, label: 'Initial' });

    // Open again, the initial test is on the Bench with the condition samples that hold its readings
    // (the fridge's; the study has no retained samples), each with both readings counted.
    await t.db.update(checkpoints).set({ status: 'open' }).where(eq(checkpoints.id, init[0].id));
    const bench = (await technician.get('/api/bench?days=7')).body as {
      groups: { conditions: { checkpoints: { id: number; samples: { code: string; recorded: number }[]; toRecord: number }[] }[] }[];
    };
    const onBench = bench.groups.flatMap((g) => g.conditions.flatMap((c) => c.checkpoints)).find((c) => c.id === init[0].id)!;
    const fridgeCodes = (await t.db.select({ code: samples.code }).from(samples).where(eq(samples.studyConditionId, conds[0]))).map((x) => x.code);
    expect(onBench.samples.map((x) => x.code).sort()).toEqual(fridgeCodes.sort());
    expect(onBench.samples.map((x) => x.recorded)).toEqual([2, 2]);
    expect(onBench.toRecord).toBe(0);
    await t.db.update(checkpoints).set({ status: 'done' }).where(eq(checkpoints.id, init[0].id));
  });
});
