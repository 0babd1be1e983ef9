/**
 * Issue 20, at the bench: a typed or scanned sample code opens its due checkpoint (GET
 * /api/samples/:code/due; unknown and another lab's codes answer the same 404), the sample page
 * names the study's container and this sample's own progress, the people responsible for a study
 * (a list, the main person first) and the Bench's `mine`, locations ordered by urgency, the
 * method of the baseline and previous readings on the Record sheet, and each replicate's own
 * baseline. Invented studies and readings.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import type { RecordSheet } from '../../shared/schemas/records';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client;
let technician: Client;
let cat: Catalogue;
let study: StudyDetail;
let today: string;

const attr = (code: string) => study.attributes.find((a) => a.code === code)!.id;
const initialCp = () => study.checkpoints.find((c) => c.kind === 'initial')!;
const cp = (label: string, cond: number) => study.checkpoints.find((c) => c.label === label && c.studyConditionId === study.conditions[cond].id)!;
const samplesIn = (cond: number | null) =>
  study.samples
    .filter((s) => s.studyConditionId === (cond == null ? null : study.conditions[cond].id))
    .sort((a, b) => a.labelOrder - b.labelOrder);
const of = (list: StudyDetail['samples'], batch: number, replicate: number) => list.find((s) => s.batchId === cat.batchIds[batch] && s.replicate === replicate)!;

function readings(ph: number, method: string) {
  return [
    { studyAttributeId: attr('ph'), value: ph, method: { method } },
    { studyAttributeId: attr('separation'), value: 0 },
    { studyAttributeId: attr('odor'), value: 'no_change' },
  ];
}

beforeAll(async () => {
  t = await createTestApp();
  formulator = await t.signIn(DEMO.formulator);
  technician = await t.signIn(DEMO.technician);
  cat = await makeCatalogue(t.db, t.labs[0].id, 'Oat balm');
  today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  // Started 7 days ago, two samples per cell: Week 1 of both conditions is due today, Week 4 in three weeks.
  const plan = {
    ...planFor(cat, addDays(today, -7)),
    samplesPerCell: 2,
    containerDescription: '60 mL airless pump',
    responsibleIds: [t.labs[0].members[DEMO.technician], t.labs[0].members[DEMO.formulator]],
  };
  const created = await formulator.post('/api/studies', plan);
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  study = started.body.study;
});
afterAll(async () => t?.close());

describe('the people responsible for a study', () => {
  it('keeps the list in order, the first as the main person, on the study page and the list', async () => {
    expect(study.responsible?.id).toBe(t.labs[0].members[DEMO.technician]);
    expect(study.responsibles.map((p) => p.id)).toEqual([t.labs[0].members[DEMO.technician], t.labs[0].members[DEMO.formulator]]);
    const list = (await formulator.get('/api/studies')).body.studies as { id: number; responsibles: { id: number }[] }[];
    expect(list.find((s) => s.id === study.id)!.responsibles).toHaveLength(2);
  });

  it('takes responsibleId alone from an older client as a list of one', async () => {
    const plan = { ...planFor(cat, addDays(today, 30)), title: 'Older client', responsibleId: t.labs[0].members[DEMO.formulator] };
    const res = await formulator.post('/api/studies', plan);
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.study.responsibles.map((p: { id: number }) => p.id)).toEqual([t.labs[0].members[DEMO.formulator]]);
  });

  it("refuses another lab's member or an unknown id, naming the entry", async () => {
    const plan = { ...planFor(cat, addDays(today, 30)), responsibleIds: [t.labs[0].members[DEMO.technician], t.labs[1].members[DEMO.otherTechnician]] };
    const res = await formulator.post('/api/studies', plan);
    expect(res.status).toBe(400);
    expect(res.body.error.fields).toEqual({ 'responsibleIds.1': 'No such active member in your lab' });
    const bad = await formulator.post('/api/studies', { ...plan, responsibleIds: ['x'] });
    expect(bad.status).toBe(400);
    expect(Object.keys(bad.body.error.fields)).toEqual(['responsibleIds.0']);
  });

  it("marks the Bench's checkpoints of studies the member is responsible for as mine", async () => {
    const res = await technician.get('/api/bench?days=7');
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    const bench = res.body as BenchResponse;
    const cps = bench.groups.flatMap((g) => g.conditions.flatMap((c) => c.checkpoints)).filter((c) => c.study.id === study.id);
    expect(cps.length).toBeGreaterThan(0);
    expect(cps.every((c) => c.study.mine)).toBe(true);
    const owner = await t.signIn(DEMO.owner);
    const ownerBench = (await owner.get('/api/bench?days=7')).body as BenchResponse;
    expect(ownerBench.groups.flatMap((g) => g.conditions.flatMap((c) => c.checkpoints)).some((c) => c.study.mine)).toBe(false);
  });
});

describe('the Bench orders locations by urgency', () => {
  it('puts the initial test first while it is overdue, then a location with overdue work, then due, then upcoming', async () => {
    const bench = (await technician.get('/api/bench?days=7')).body as BenchResponse;
    const urgency = (g: BenchResponse['groups'][number]) => {
      const states = g.conditions.flatMap((c) => c.checkpoints.map((x) => x.state));
      return states.includes('overdue') ? 0 : states.includes('due') ? 1 : 2;
    };
    expect(bench.groups[0].location).toBe('Initial test (before storage)'); // not recorded: overdue
    const rest = bench.groups.slice(1).map(urgency);
    expect(rest).toEqual([...rest].sort((a, b) => a - b));
  });
});

describe('finding a sample by its code', () => {
  it("opens a retained sample's initial test, and a stored sample's checkpoint due today", async () => {
    const retained = samplesIn(null)[0];
    const r = await technician.get(`/api/samples/${retained.code}/due`);
    expect(r.status).toBe(200);
    expect(r.body.due).toMatchObject({ code: retained.code, retained: true, checkpoint: { id: initialCp().id, label: 'Initial' } });
    const oven = samplesIn(1)[0];
    const o = await technician.get(`/api/samples/${oven.code.toLowerCase()}/due`);
    expect(o.status).toBe(200);
    expect(o.body.due.checkpoint).toMatchObject({ id: cp('Week 1', 1).id, state: 'due', complete: false });
  });

  it('answers 404 alike for an unknown code and a sample of another lab, and 400 for what is no code', async () => {
    const otherOwner = await t.signIn(DEMO.otherOwner);
    const otherCat = await makeCatalogue(t.db, t.labs[1].id, 'Other lab cream');
    const made = await otherOwner.post('/api/studies', planFor(otherCat, today));
    expect(made.status, JSON.stringify(made.body)).toBe(201);
    const theirs = (await otherOwner.post(`/api/studies/${made.body.study.id}/start`)).body.study as StudyDetail;
    const foreign = await technician.get(`/api/samples/${theirs.samples[0].code}/due`);
    const unknown = await technician.get('/api/samples/ZZZZ99/due');
    expect(foreign.status).toBe(404);
    expect(unknown.status).toBe(404);
    expect(foreign.body).toEqual(unknown.body);
    const bad = await technician.get('/api/samples/no%20code!/due');
    expect(bad.status).toBe(400);
    expect(Object.keys(bad.body.error.fields)).toEqual(['code']);
    expect((await t.client().get(`/api/samples/${samplesIn(1)[0].code}/due`)).status).toBe(401);
  });

  it("moves on to the next checkpoint once this sample's readings are all saved, though others are still open", async () => {
    // The initial test first (each batch's retained samples), so the pulls have their baselines.
    for (const s of samplesIn(null)) {
      const method = s.replicate === 1 ? 'neat' : '10 % dispersion in water';
      const res = await technician.put(`/api/samples/${s.code}/checkpoints/${initialCp().id}/observations`, { entries: readings(s.replicate === 1 ? 5.3 : 5.5, method) });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
    }
    const oven = samplesIn(1)[0];
    const week1 = cp('Week 1', 1);
    const saved = await technician.put(`/api/samples/${oven.code}/checkpoints/${week1.id}/observations`, { entries: readings(5.4, 'neat') });
    expect(saved.status, JSON.stringify(saved.body)).toBe(200);
    const due = (await technician.get(`/api/samples/${oven.code}/due`)).body.due;
    expect(due.checkpoint).toMatchObject({ id: cp('Week 4', 1).id, state: 'upcoming' });
    // Its sibling still has Week 1 to do.
    expect((await technician.get(`/api/samples/${samplesIn(1)[1].code}/due`)).body.due.checkpoint.id).toBe(week1.id);

    // The sample page agrees: this sample's Week 1 is complete (the checkpoint stays open for the others).
    const page = (await technician.get(`/api/samples/${oven.code}`)).body.sample;
    const w1 = page.checkpoints.find((c: { id: number }) => c.id === week1.id);
    expect(w1.status).toBe('open');
    expect(w1.sample).toEqual({ recorded: 3, expected: 3, complete: true });
    expect(page.dueCheckpointId).toBe(cp('Week 4', 1).id);
  });
});

describe('the sample page', () => {
  it("names the study's container as the pack, not the batch's bulk packaging", async () => {
    const page = (await technician.get(`/api/samples/${samplesIn(0)[0].code}`)).body.sample;
    expect(page.pack).toBe('60 mL airless pump');
    expect(page.batch.packaging).toBe('50 mL PET jar, PP lid');
  });
});

describe('the Record sheet at a later pull', () => {
  it("gives each replicate its own batch's baseline, with the method used then", async () => {
    for (const replicate of [1, 2]) {
      const s = of(samplesIn(1), 1, replicate);
      const sheet = (await technician.get(`/api/samples/${s.code}/checkpoints/${cp('Week 1', 1).id}`)).body.sheet as RecordSheet;
      const ph = sheet.attributes.find((a) => a.attribute.code === 'ph')!;
      const retained = of(samplesIn(null), 1, replicate);
      expect(ph.baseline).toMatchObject({
        value: replicate === 1 ? 5.3 : 5.5,
        label: 'Initial',
        sampleCode: retained.code,
        method: { method: replicate === 1 ? 'neat' : '10 % dispersion in water' },
      });
    }
  });

  it('gives the method of the previous reading of this sample', async () => {
    const oven = samplesIn(1)[0];
    const sheet = (await technician.get(`/api/samples/${oven.code}/checkpoints/${cp('Week 4', 1).id}`)).body.sheet as RecordSheet;
    const ph = sheet.attributes.find((a) => a.attribute.code === 'ph')!;
    expect(ph.previous).toMatchObject({ value: 5.4, label: 'Week 1', method: { method: 'neat' } });
  });
});
