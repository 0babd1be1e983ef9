import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eq, sql } from 'drizzle-orm';
import mysql from 'mysql2/promise';
import sharp from 'sharp';
import { inject } from 'vitest';
import { auditLog, observationRevisions, observations, photos, studies } from '../../server/db/schema';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;

interface Study {
  id: number;
  samples: { id: number; code: string; studyConditionId: number | null; batchId: number }[];
  checkpoints: { id: number; label: string; kind: string; studyConditionId: number | null; state: string; dueDate: string }[];
  conditions: { id: number; role: string }[];
  attributes: { id: number; code: string }[];
}
let study: Study;

const today = () => localDateInZone(new Date(), 'Europe/Berlin');

beforeAll(async () => {
  // A relative uploads folder under a dot folder on purpose, like DATA_DIR's default '.data/uploads':
  // photos must still be served (sendFile refuses relative paths and, by default, dot segments).
  t = await createTestApp({ uploadsDir: join(relative(process.cwd(), mkdtempSync(join(tmpdir(), 'kw-uploads-'))), '.data', 'uploads') });
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  study = await startStudy();
});
afterAll(async () => t?.close());

/** A running study started 7 days ago: the initial test (late but open), week 1 (due today), week 4 (not open yet). */
async function startStudy(): Promise<Study> {
  const plan = planFor(cat, addDays(today(), -7));
  plan.attributes = [
    { attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } },
    { attributeId: cat.attributeIds.viscosity, criterion: { kind: 'change_pct', max: 20 } as never },
    { attributeId: cat.attributeIds.separation, criterion: { kind: 'worst_grade', grade: 1 } as never },
    { attributeId: cat.attributeIds.odor, criterion: { kind: 'worst_compared', level: 'slight' } as never },
    { attributeId: cat.attributeIds.pack_integrity, criterion: { kind: 'must_pass' } as never },
    { attributeId: cat.attributeIds.mass, criterion: { kind: 'range', min: 40, max: 60 } as never },
  ] as never;
  const draft = await formulator.post('/api/studies', plan);
  const started = await formulator.post(`/api/studies/${draft.body.study.id}/start`);
  expect(started.status).toBe(200);
  return started.body.study;
}

const attr = (s: Study, code: string) => s.attributes.find((a) => a.code === code)!.id;
const cp = (s: Study, label: string, cond = 1) => s.checkpoints.find((c) => c.label === label && c.studyConditionId === s.conditions[cond].id)!;
const sampleIn = (s: Study, cond = 1, i = 0) => s.samples.filter((x) => x.studyConditionId === s.conditions[cond].id)[i];
/** The study's one initial test, and a batch's retained sample for it (batch i). */
const initial = (s: Study) => s.checkpoints.find((c) => c.kind === 'initial')!;
const retained = (s: Study, i = 0) => s.samples.filter((x) => x.studyConditionId == null)[i];

function fullEntries(s: Study, v: { ph: number; viscosity: number; separation: number; odor: string; pack: boolean; mass: number }) {
  return [
    { studyAttributeId: attr(s, 'ph'), value: v.ph, method: { method: 'neat' } },
    { studyAttributeId: attr(s, 'viscosity'), value: v.viscosity, method: { spindle: 'RV-5', speed: 10, temperature: 25 } },
    { studyAttributeId: attr(s, 'separation'), value: v.separation },
    { studyAttributeId: attr(s, 'odor'), value: v.odor },
    { studyAttributeId: attr(s, 'pack_integrity'), value: v.pack },
    { studyAttributeId: attr(s, 'mass'), value: v.mass },
  ];
}

const put = (c: Client, code: string, cpId: number, body: object) => c.put(`/api/samples/${code}/checkpoints/${cpId}/observations`, body);

/**
 * A save answers with the Record sheet built from what its transaction read (issue 14): it must equal
 * the sheet read afresh, at the initial test, a pull, and when the save closes the checkpoint.
 */
async function expectAnswerFresh(res: { body: { sheet: unknown } }, code: string, cpId: number) {
  const fresh = await technician.get(`/api/samples/${code}/checkpoints/${cpId}`);
  expect(res.body.sheet).toEqual(fresh.body.sheet);
}

describe('recording a checkpoint', () => {
  it('records the initial test, evaluates every criterion kind on the server, and closes the checkpoint when complete', async () => {
    const day0 = initial(study);
    for (const [i, s] of study.samples.filter((x) => x.studyConditionId == null).entries()) {
      const res = await put(technician, s.code, day0.id, { entries: fullEntries(study, { ph: 5.3 + i * 0.1, viscosity: 12000, separation: 0, odor: 'no_change', pack: true, mass: 52 }) });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
      await expectAnswerFresh(res, s.code, day0.id);
    }
    const sheet = (await technician.get(`/api/samples/${retained(study).code}/checkpoints/${day0.id}`)).body.sheet;
    expect(sheet.sample.condition).toBeNull(); // a retained sample, in no condition
    expect(sheet.controlReading).toBeNull();
    expect(sheet.checkpoint.state).toBe('done');
    expect(sheet.attributes.every((a: { current: { verdict: string } }) => a.current.verdict === 'pass')).toBe(true);
    expect(sheet.attributes.find((a: { attribute: { code: string } }) => a.attribute.code === 'viscosity').current.method).toEqual({ spindle: 'RV-5', speed: 10, temperature: 25 });
  });

  it('judges week 1 against the batch\'s initial test: pass and fail at each kind (common-practice criteria)', async () => {
    const w1 = cp(study, 'Week 1');
    const s = sampleIn(study);
    const res = await put(technician, s.code, w1.id, {
      entries: fullEntries(study, { ph: 5.9, viscosity: 9000, separation: 2, odor: 'marked', pack: false, mass: 61 }),
    });
    expect(res.status).toBe(200);
    await expectAnswerFresh(res, s.code, w1.id);
    const byCode = Object.fromEntries(res.body.sheet.attributes.map((a: { attribute: { code: string }; current: unknown }) => [a.attribute.code, a.current]));
    expect(byCode.ph.verdict).toBe('fail'); // 0.6 from 5.3, allowed ±0.5
    expect(byCode.viscosity.verdict).toBe('fail'); // -25 %, allowed ±20 %
    expect(byCode.separation.verdict).toBe('fail'); // grade 2, worst allowed 1
    expect(byCode.odor.verdict).toBe('fail'); // marked, worst allowed slight
    expect(byCode.pack_integrity.verdict).toBe('fail');
    expect(byCode.mass.verdict).toBe('fail'); // above 60
    // With the method used then (pH neat), offered again at this pull.
    expect(res.body.sheet.attributes[0].baseline).toEqual({ value: 5.3, label: 'Initial', sampleCode: retained(study, 0).code, method: { method: 'neat' } });
    expect(res.body.sheet.attributes[0].previous).toBeNull(); // this jar's first pull
    // The walk through the checkpoint's samples: this one is complete, the next is not yet.
    const s2 = sampleIn(study, 1, 1);
    expect(res.body.sheet.siblings).toEqual(expect.arrayContaining([{ code: s.code, complete: true }, { code: s2.code, complete: false }]));

    const ok = await put(technician, s2.code, w1.id, {
      entries: fullEntries(study, { ph: 5.8, viscosity: 10000, separation: 1, odor: 'slight', pack: true, mass: 40 }),
    });
    await expectAnswerFresh(ok, s2.code, w1.id);
    const ok2 = Object.fromEntries(ok.body.sheet.attributes.map((a: { attribute: { code: string }; current: { verdict: string } }) => [a.attribute.code, a.current.verdict]));
    // pH 5.8 vs its batch's initial 5.4: 0.4 passes; viscosity -16.7 % passes; boundaries pass.
    expect(ok.body.sheet.attributes[0].baseline).toMatchObject({ label: 'Initial', sampleCode: retained(study, 1).code });
    expect(ok.body.sheet.attributes[0].baseline.value).toBeCloseTo(5.4, 12);
    expect(ok2).toEqual({ ph: 'pass', viscosity: 'pass', separation: 'pass', odor: 'pass', pack_integrity: 'pass', mass: 'pass' });
    expect(ok.body.sheet.siblings.filter((x: { complete: boolean }) => x.complete).map((x: { code: string }) => x.code).sort()).toEqual([s.code, s2.code].sort());
    const [audits] = await t.db.select({ n: sql<number>`count(*)` }).from(auditLog).where(eq(auditLog.entity, 'observation'));
    expect(Number(audits.n)).toBe(24); // one audit row per observation
    // ... each naming its own observation and value (the save writes them in one multi-row INSERT each).
    const rows = await t.db
      .select({ id: observations.id, valueNum: observations.valueNum, entityId: auditLog.entityId, newValue: auditLog.newValue })
      .from(observations)
      .innerJoin(auditLog, sql`${auditLog.entity} = 'observation' AND ${auditLog.entityId} = CAST(${observations.id} AS CHAR)`);
    expect(rows).toHaveLength(24);
    for (const r of rows) if (r.valueNum != null) expect((r.newValue as { value: number }).value).toBe(r.valueNum);
  });

  it('a partial save leaves the checkpoint open; not-done needs a reason', async () => {
    const w1 = cp(study, 'Week 1', 0);
    const s = sampleIn(study, 0);
    const noReason = await put(technician, s.code, w1.id, { entries: [{ studyAttributeId: attr(study, 'ph') }] });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields).toHaveProperty(['entries.0.value']);
    const res = await put(technician, s.code, w1.id, {
      entries: [{ studyAttributeId: attr(study, 'ph'), value: 5.4 }, { studyAttributeId: attr(study, 'viscosity'), notDoneReason: 'Viscometer out for calibration' }],
    });
    expect(res.status).toBe(200);
    await expectAnswerFresh(res, s.code, w1.id);
    expect(res.body.sheet.checkpoint.state).not.toBe('done');
    expect(res.body.sheet.attributes[1].current).toMatchObject({ verdict: 'not_done', notDoneReason: 'Viscometer out for calibration' });
  });
});

describe('the control value beside compared attributes', () => {
  it('is the control read the same day (the pull\'s paired control reading), not a later or earlier one; a control sample gets none', async () => {
    const s4 = await startStudy();
    const [fridge, oven] = [0, 1].map((c) => s4.samples.find((x) => x.studyConditionId === s4.conditions[c].id && x.batchId === cat.batchIds[0])!);
    const odor = (v: string) => ({ entries: [{ studyAttributeId: attr(s4, 'odor'), value: v }] });
    // Week 4 is three weeks ahead: a formulator records the control early, as if read later than week 1.
    expect((await put(formulator, fridge.code, cp(s4, 'Week 4', 0).id, { ...odor('slight'), allowEarly: true })).status).toBe(200);
    const odorOf = (sheet: { attributes: { attribute: { code: string }; control: unknown }[] }) => sheet.attributes.find((a) => a.attribute.code === 'odor')!;

    // The oven's week 1 is paired with the fridge's week 1, not yet read: no control value, and the sheet says which to read first.
    let w1 = (await technician.get(`/api/samples/${oven.code}/checkpoints/${cp(s4, 'Week 1').id}`)).body.sheet;
    expect(odorOf(w1).control).toBeNull();
    expect(w1.controlReading).toEqual({ checkpointId: cp(s4, 'Week 1', 0).id, label: 'Week 1', dueDate: cp(s4, 'Week 1', 0).dueDate, sampleCode: fridge.code, recorded: false, initial: false });
    expect((await put(technician, fridge.code, cp(s4, 'Week 1', 0).id, odor('no_change'))).status).toBe(200);
    w1 = (await technician.get(`/api/samples/${oven.code}/checkpoints/${cp(s4, 'Week 1').id}`)).body.sheet;
    expect(odorOf(w1).control).toEqual({ value: 'no_change', label: 'Week 1', sampleCode: fridge.code, sameDay: true });
    expect(w1.controlReading.recorded).toBe(true);
    const w4 = (await technician.get(`/api/samples/${oven.code}/checkpoints/${cp(s4, 'Week 4').id}`)).body.sheet;
    expect(odorOf(w4).control).toEqual({ value: 'slight', label: 'Week 4', sampleCode: fridge.code, sameDay: true });
    expect(w4.sample.condition).toMatchObject({ kind: 'constant', setpointC: 45, role: 'accelerated' });

    const own = (await technician.get(`/api/samples/${fridge.code}/checkpoints/${cp(s4, 'Week 1', 0).id}`)).body.sheet;
    expect(own.sample.condition).toMatchObject({ role: 'control', setpointC: 4 });
    expect(own.controlReading).toBeNull();
    expect(own.attributes.every((a: { control: unknown }) => a.control === null)).toBe(true);
  });
});

describe('bad recordings are refused and nothing partial is kept', () => {
  it('impossible values, wrong kinds and unknown attributes answer 422 naming the entry', async () => {
    const w1 = cp(study, 'Week 1', 0);
    const s = sampleIn(study, 0, 1);
    const before = await t.db.select({ n: sql<number>`count(*)` }).from(observations);
    const res = await put(technician, s.code, w1.id, {
      entries: [
        { studyAttributeId: attr(study, 'mass'), value: 50 },
        { studyAttributeId: attr(study, 'ph'), value: 15 },
        { studyAttributeId: attr(study, 'viscosity'), value: -3 },
        { studyAttributeId: attr(study, 'odor'), value: 'a bit off' },
        { studyAttributeId: attr(study, 'separation'), value: 7 },
        { studyAttributeId: attr(study, 'pack_integrity'), value: 'yes' },
      ],
    });
    expect(res.status).toBe(422);
    const f = res.body.error.fields;
    expect(f['entries.1.value']).toMatch(/pH must be between 0 and 14/);
    expect(f['entries.2.value']).toMatch(/negative/);
    expect(f['entries.3.value']).toMatch(/no change, slight/);
    expect(f['entries.4.value']).toMatch(/not a grade/);
    expect(f['entries.5.value']).toMatch(/pass or fail/);
    const after = await t.db.select({ n: sql<number>`count(*)` }).from(observations);
    expect(Number(after[0].n)).toBe(Number(before[0].n)); // the valid mass entry was not kept either
  });

  it('the same save sent twice answers 409 the second time', async () => {
    const w1 = cp(study, 'Week 1', 0);
    const s = sampleIn(study, 0, 1);
    const body = { entries: [{ studyAttributeId: attr(study, 'mass'), value: 50 }] };
    expect((await put(technician, s.code, w1.id, body)).status).toBe(200);
    const again = await put(technician, s.code, w1.id, body);
    expect(again.status).toBe(409);
    expect(again.body.error.fields['entries.0.value']).toMatch(/correct it with a reason/);
  });

  it('a checkpoint before its window is closed to technicians; a formulator may record early', async () => {
    const w4 = cp(study, 'Week 4');
    const s = sampleIn(study);
    const body = { entries: [{ studyAttributeId: attr(study, 'mass'), value: 50 }], allowEarly: true };
    const tech = await put(technician, s.code, w4.id, body);
    expect(tech.status).toBe(409);
    expect(tech.body.error.message).toMatch(/opens on/);
    expect((await put(formulator, s.code, w4.id, body)).status).toBe(200);
  });

  it('a sample with a checkpoint of another condition, or of another lab, is not found', async () => {
    const fridgeCp = cp(study, 'Week 1', 0);
    const ovenSample = sampleIn(study, 1);
    expect((await put(technician, ovenSample.code, fridgeCp.id, { entries: [{ studyAttributeId: attr(study, 'mass'), value: 1 }] })).status).toBe(404);
    expect((await otherOwner.get(`/api/samples/${ovenSample.code}/checkpoints/${cp(study, 'Week 1').id}`)).status).toBe(404);
    expect((await put(otherOwner, ovenSample.code, cp(study, 'Week 1').id, { entries: [{ studyAttributeId: attr(study, 'mass'), value: 1 }] })).status).toBe(404);
  });
});

describe('corrections, voids and locking', () => {
  it('a correction needs a reason and keeps the old value, who, when and why', async () => {
    const w1 = cp(study, 'Week 1');
    const sheet = (await technician.get(`/api/samples/${sampleIn(study).code}/checkpoints/${w1.id}`)).body.sheet;
    const ph = sheet.attributes.find((a: { attribute: { code: string } }) => a.attribute.code === 'ph').current;
    const noReason = await technician.post(`/api/observations/${ph.id}/corrections`, { value: 5.5 });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields).toHaveProperty('reason');
    const res = await technician.post(`/api/observations/${ph.id}/corrections`, { value: 5.5, reason: 'Read the wrong meter display' });
    expect(res.status).toBe(200);
    expect(res.body.history).toHaveLength(2);
    expect(res.body.history[0]).toMatchObject({ version: 1, value: 5.9, verdict: 'fail', change: 'correction', reason: 'Read the wrong meter display', recordedBy: 'Priya Nair', changedBy: 'Priya Nair' });
    expect(res.body.history[1]).toMatchObject({ version: 2, value: 5.5, verdict: 'pass' });
    const [a] = await t.db.select().from(auditLog).where(eq(auditLog.reason, 'Read the wrong meter display'));
    expect(a.oldValue).toMatchObject({ value: 5.9 });
    expect(a.newValue).toMatchObject({ value: 5.5 });
  });

  it('a void keeps the entry and its history, and reopens a complete checkpoint', async () => {
    const day0 = initial(study);
    const sheet = (await technician.get(`/api/samples/${retained(study).code}/checkpoints/${day0.id}`)).body.sheet;
    const mass = sheet.attributes.find((a: { attribute: { code: string } }) => a.attribute.code === 'mass').current;
    const res = await technician.post(`/api/observations/${mass.id}/void`, { reason: 'Weighed the wrong jar' });
    expect(res.status).toBe(200);
    expect(res.body.history.at(-1)).toMatchObject({ value: null, reason: 'Voided' });
    const [row] = await t.db.select().from(observations).where(eq(observations.id, mass.id));
    expect(row).toMatchObject({ voided: true, valueNum: 52 });
    const after = (await technician.get(`/api/samples/${retained(study).code}/checkpoints/${day0.id}`)).body.sheet;
    expect(after.checkpoint.state).not.toBe('done');
  });

  it('once in review, only an owner corrects, and that is recorded as reopening review', async () => {
    const s2 = await startStudy();
    const day0 = initial(s2);
    await put(technician, retained(s2).code, day0.id, { entries: [{ studyAttributeId: attr(s2, 'ph'), value: 5.5 }] });
    await t.db.update(studies).set({ status: 'in_review' }).where(eq(studies.id, s2.id));
    const sheet = (await technician.get(`/api/samples/${retained(s2).code}/checkpoints/${day0.id}`)).body.sheet;
    expect(sheet.locked).toBe(true);
    const obsId = sheet.attributes[0].current.id;
    expect((await put(technician, retained(s2).code, day0.id, { entries: [{ studyAttributeId: attr(s2, 'mass'), value: 50 }] })).status).toBe(409);
    expect((await formulator.post(`/api/observations/${obsId}/corrections`, { value: 5.6, reason: 'Typo' })).status).toBe(403);
    expect((await owner.post(`/api/observations/${obsId}/corrections`, { value: 5.6, reason: 'Typo found in review' })).status).toBe(200);
    const reopened = await t.db.select().from(auditLog).where(eq(auditLog.reason, 'Observation corrected after review began: Typo found in review'));
    expect(reopened).toHaveLength(1);
  });
});

describe('the audit trail is append-only for the app account', () => {
  it('UPDATE and DELETE on audit_log and observation_revisions are refused by MariaDB', async () => {
    const m = inject('mariadb');
    const conn = await mysql.createConnection({ host: '127.0.0.1', port: m.port, user: m.appUser, password: m.appPassword, database: t.database });
    try {
      await expect(conn.query('UPDATE audit_log SET reason = ? LIMIT 1', ['tampered'])).rejects.toMatchObject({ code: 'ER_TABLEACCESS_DENIED_ERROR' });
      await expect(conn.query('DELETE FROM audit_log LIMIT 1')).rejects.toMatchObject({ code: 'ER_TABLEACCESS_DENIED_ERROR' });
      await expect(conn.query('UPDATE observation_revisions SET reason = ? LIMIT 1', ['x'])).rejects.toMatchObject({ code: 'ER_TABLEACCESS_DENIED_ERROR' });
      const [rows] = await conn.query('SELECT count(*) AS n FROM audit_log');
      expect(Number((rows as { n: number }[])[0].n)).toBeGreaterThan(0);
    } finally {
      await conn.end();
    }
    const [revs] = await t.db.select({ n: sql<number>`count(*)` }).from(observationRevisions);
    expect(Number(revs.n)).toBeGreaterThan(0);
  });

  it('owners read it filtered by study and export CSV; others get 403', async () => {
    const res = await owner.get(`/api/audit?studyId=${study.id}`);
    expect(res.status).toBe(200);
    expect(res.body.rows.length).toBeGreaterThan(20);
    // The study, its readings and photos, and the out-of-specification investigations its failing readings opened.
    expect(res.body.rows.every((r: { entity: string }) => ['study', 'observation', 'photo', 'oos_investigation'].includes(r.entity))).toBe(true);
    const byPerson = await owner.get(`/api/audit?userId=${t.labs[0].members[DEMO.technician]}&from=2020-01-01&to=2099-12-31`);
    expect(byPerson.body.rows.length).toBeGreaterThan(0);
    const csv = await owner.get(`/api/audit.csv?studyId=${study.id}`);
    expect(csv.headers['content-type']).toMatch(/text\/csv/);
    expect(csv.text.split('\r\n')[0]).toBe('time_utc,who,action,entity,entity_id,old_value,new_value,reason,action_label,sentence');
    expect((await formulator.get('/api/audit')).status).toBe(403);
    expect((await technician.get('/api/audit.csv')).status).toBe(403);
    expect((await otherOwner.get(`/api/audit?studyId=${study.id}`)).status).toBe(404); // another lab's study, as everywhere
    expect((await owner.get('/api/audit?from=yesterday')).status).toBe(400);
  });
});

describe('photos', () => {
  const w1 = () => cp(study, 'Week 1');
  const url = () => `/api/samples/${sampleIn(study).code}/checkpoints/${w1().id}/photos`;
  const photoCount = async () => Number((await t.db.select({ n: sql<number>`count(*)` }).from(photos))[0].n);
  const image = (format: 'jpeg' | 'png' | 'webp') =>
    sharp({ create: { width: 64, height: 48, channels: 3, background: { r: 230, g: 220, b: 200 } } })[format]().toBuffer();

  it('takes JPEG, PNG and WebP, makes thumbnails, and serves them as images to the lab only', async () => {
    const res = await technician.agent
      .post(url())
      .set('X-Keepwell-Request', '1')
      .attach('photos', await image('jpeg'), 'jar.jpg')
      .attach('photos', await image('png'), 'jar.png')
      .attach('photos', await image('webp'), 'jar.webp');
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.photos).toHaveLength(3);
    const p = res.body.photos[0];
    const img = await technician.get(p.url);
    expect(img.headers['content-type']).toBe('image/webp'); // the display copy (tests/api/photos.test.ts)
    expect((await technician.get(p.originalUrl)).headers['content-type']).toBe('image/jpeg');
    expect(img.headers['x-content-type-options']).toBe('nosniff');
    const thumb = await technician.get(p.thumbUrl);
    expect(thumb.headers['content-type']).toBe('image/webp');
    expect((await otherOwner.get(p.url)).status).toBe(404);
    const strip = await formulator.get(`/api/studies/${study.id}/photos`);
    expect(strip.body.photos.length).toBe(3);
  });

  it('refuses HTML or SVG renamed .jpg (415), a 20 MB file (413), seven files (413) and a truncated upload (400); nothing kept', async () => {
    const before = await photoCount();
    const html = await technician.agent.post(url()).set('X-Keepwell-Request', '1').attach('photos', Buffer.from('<!doctype html><script>alert(1)</script>'), { filename: 'x.jpg', contentType: 'image/jpeg' });
    expect(html.status).toBe(415);
    expect(html.body.error.fields['photos.0']).toMatch(/Not a JPEG/);
    const svg = await technician.agent
      .post(url())
      .set('X-Keepwell-Request', '1')
      .attach('photos', await image('jpeg'), 'ok.jpg')
      .attach('photos', Buffer.from('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'), { filename: 'y.jpg', contentType: 'image/jpeg' });
    expect(svg.status).toBe(415);
    const big = await technician.agent.post(url()).set('X-Keepwell-Request', '1').attach('photos', Buffer.alloc(20 * 1024 * 1024, 1), 'big.jpg');
    expect(big.status).toBe(413);
    const seven = technician.agent.post(url()).set('X-Keepwell-Request', '1');
    for (let i = 0; i < 7; i++) seven.attach('photos', await image('png'), `p${i}.png`);
    expect((await seven).status).toBe(413);
    const boundary = '----kwtest';
    const truncated = await technician.agent
      .post(url())
      .set('X-Keepwell-Request', '1')
      .set('Content-Type', `multipart/form-data; boundary=${boundary}`)
      .send(`--${boundary}\r\nContent-Disposition: form-data; name="photos"; filename="a.jpg"\r\nContent-Type: image/jpeg\r\n\r\n\xff\xd8\xff\xe0 partial`);
    expect(truncated.status).toBe(400);
    expect(await photoCount()).toBe(before);
    expect((await technician.get('/api/health')).status).toBe(200); // the server stays up
  });
});

describe('bulk import', () => {
  it('previews per-line errors, refuses the whole file while any line is wrong, then imports all at once', async () => {
    const s3 = await startStudy();
    const [a, b] = s3.samples.filter((x) => x.studyConditionId === s3.conditions[1].id);
    const when = `${today()} 09:30`;
    const bad = ['sample,attribute,value,time read', `${a.code},ph,5.4,${when}`, `${b.code},ph,abc,${when}`, `ZZZZZZ,ph,5.0,${when}`, `${a.code},colour,1,${when}`].join('\n');
    const preview = await formulator.agent.post(`/api/studies/${s3.id}/import/preview`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(bad), 'readings.csv');
    expect(preview.status).toBe(200);
    expect(preview.body.errorCount).toBe(3);
    expect(preview.body.rows[0]).toMatchObject({ line: 2, checkpointLabel: 'Week 1', error: null });
    expect(preview.body.rows[1].error).toMatch(/Line 3: "abc" is not a valid pH value/);
    const refused = await formulator.agent.post(`/api/studies/${s3.id}/import`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(bad), 'readings.csv');
    expect(refused.status).toBe(422);
    const none = await t.db.select({ n: sql<number>`count(*)` }).from(observations).where(eq(observations.studyId, s3.id));
    expect(Number(none[0].n)).toBe(0);
    const good = ['sample,attribute,value,time read', `${a.code},ph,5.4,${when}`, `${b.code},ph,5.5,${when}`, `${a.code},odor,no change,${when}`].join('\n');
    const ok = await formulator.agent.post(`/api/studies/${s3.id}/import`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(good), 'readings.csv');
    expect(ok.status, JSON.stringify(ok.body)).toBe(201);
    expect(ok.body.imported).toBe(3);
    const tech = await technician.agent.post(`/api/studies/${s3.id}/import`).set('X-Keepwell-Request', '1').attach('file', Buffer.from(good), 'readings.csv');
    expect(tech.status).toBe(403);
  });
});
