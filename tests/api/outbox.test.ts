/**
 * Saves sent from a device's outbox (issue 18): the client id as an idempotency key stored with each
 * observation (one per lab), the device's recorded time beside the server's, a device clock more than
 * 10 minutes off flagged on the reading and in the audit trail, and a photo's client id.
 */
import { randomUUID } from 'node:crypto';
import { and, eq, sql } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { auditLog, observations, photos } from '../../server/db/schema';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client, technician: Client, owner: Client, otherOwner: Client;
let cat: Catalogue;

interface Study {
  id: number;
  samples: { id: number; code: string; studyConditionId: number | null }[];
  checkpoints: { id: number; label: string; kind: string; studyConditionId: number | null }[];
  conditions: { id: number }[];
  attributes: { id: number; code: string }[];
}
let study: Study;

const today = () => localDateInZone(new Date(), 'Europe/Berlin');
const attr = (code: string) => study.attributes.find((a) => a.code === code)!.id;
const cp = (label: string, cond = 1) => study.checkpoints.find((c) => c.label === label && c.studyConditionId === study.conditions[cond].id)!;
const sampleIn = (cond = 1, i = 0) => study.samples.filter((x) => x.studyConditionId === study.conditions[cond].id)[i];
const put = (c: Client, code: string, cpId: number, body: object) => c.put(`/api/samples/${code}/checkpoints/${cpId}/observations`, body);
const count = async (table: typeof observations | typeof auditLog | typeof photos) => Number((await t.db.select({ n: sql<number>`count(*)` }).from(table))[0].n);

beforeAll(async () => {
  t = await createTestApp();
  [formulator, technician, owner, otherOwner] = await Promise.all([t.signIn(DEMO.formulator), t.signIn(DEMO.technician), t.signIn(DEMO.owner), t.signIn(DEMO.otherOwner)]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  const plan = planFor(cat, addDays(today(), -7));
  plan.attributes = [
    { attributeId: cat.attributeIds.ph, criterion: { kind: 'range', min: 4.5, max: 6.5 } },
    { attributeId: cat.attributeIds.mass, criterion: { kind: 'range', min: 40, max: 60 } },
  ] as never;
  const draft = await formulator.post('/api/studies', plan);
  const started = await formulator.post(`/api/studies/${draft.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  study = started.body.study;
});
afterAll(async () => t?.close());

describe('the client id of an outbox save', () => {
  it('keeps a save once: a resend with the same id and values answers the saved sheet and changes nothing', async () => {
    const s = sampleIn(1, 0);
    const w1 = cp('Week 1');
    const recordedAt = new Date(Date.now() - 20 * 60_000).toISOString(); // recorded offline 20 minutes ago
    const body = {
      clientId: randomUUID(),
      deviceRecordedAt: recordedAt,
      deviceSentAt: new Date().toISOString(),
      entries: [
        { studyAttributeId: attr('ph'), value: 5.5, method: { method: 'neat' } },
        { studyAttributeId: attr('mass'), value: 50 },
      ],
    };
    const first = await put(technician, s.code, w1.id, body);
    expect(first.status, JSON.stringify(first.body)).toBe(200);
    expect(first.body.replayed).toBe(false);
    const [obsBefore, auditBefore] = [await count(observations), await count(auditLog)];

    // The answer was lost: the device sends it again (entries in another order, same values).
    const again = await put(technician, s.code, w1.id, { ...body, entries: [...body.entries].reverse(), deviceSentAt: new Date().toISOString() });
    expect(again.status, JSON.stringify(again.body)).toBe(200);
    expect(again.body.replayed).toBe(true);
    expect(again.body.sheet.attributes.map((a: { current: { value: number } }) => a.current.value)).toEqual([5.5, 50]);
    expect([await count(observations), await count(auditLog)]).toEqual([obsBefore, auditBefore]);

    // Both times stored: the device's, and the server's; 20 minutes late but the clock was right, so not flagged.
    const ph = first.body.sheet.attributes[0].current;
    expect(ph.device).toMatchObject({ recordedAt: recordedAt, clockSkewed: false });
    expect(Math.abs(ph.device.clockOffsetS)).toBeLessThan(60);
    expect(new Date(ph.recordedAt).getTime() - new Date(recordedAt).getTime()).toBeGreaterThan(19 * 60_000);
    const rows = await t.db.select().from(observations).where(eq(observations.clientId, body.clientId));
    expect(rows).toHaveLength(2);
    expect(rows[0].deviceRecordedAt?.toISOString()).toBe(recordedAt);
    const history = await technician.get(`/api/observations/${ph.id}/history`);
    expect(history.body.history.at(-1).device.recordedAt).toBe(recordedAt);
  });

  it('refuses the same id with other values (409, nothing changed)', async () => {
    const s = sampleIn(1, 1);
    const w1 = cp('Week 1');
    const clientId = randomUUID();
    const ok = await put(technician, s.code, w1.id, { clientId, deviceRecordedAt: new Date().toISOString(), entries: [{ studyAttributeId: attr('ph'), value: 5.6 }] });
    expect(ok.status, JSON.stringify(ok.body)).toBe(200);
    const before = await count(observations);
    const other = await put(technician, s.code, w1.id, { clientId, deviceRecordedAt: new Date().toISOString(), entries: [{ studyAttributeId: attr('ph'), value: 5.7 }] });
    expect(other.status).toBe(409);
    expect(other.body.error).toMatchObject({ code: 'conflict', fields: { clientId: 'Already used for other values' } });
    // The same id on another cell is refused too.
    const elsewhere = await put(technician, s.code, w1.id, { clientId, entries: [{ studyAttributeId: attr('mass'), value: 50 }] });
    expect(elsewhere.status).toBe(409);
    expect(await count(observations)).toBe(before);
    const [kept] = await t.db.select().from(observations).where(eq(observations.clientId, clientId));
    expect(kept.valueNum).toBe(5.6);
  });

  it('answers the saved result when the first send closed the checkpoint', async () => {
    // The control's Week 1: both of its samples, the second save completing the checkpoint.
    const w1 = cp('Week 1', 0);
    const saves = [0, 1].map((i) => ({
      code: sampleIn(0, i).code,
      body: { clientId: randomUUID(), deviceRecordedAt: new Date().toISOString(), entries: [{ studyAttributeId: attr('ph'), value: 5.4 }, { studyAttributeId: attr('mass'), value: 51 }] },
    }));
    for (const x of saves) expect((await put(technician, x.code, w1.id, x.body)).status).toBe(200);
    const sheet = (await technician.get(`/api/samples/${saves[1].code}/checkpoints/${w1.id}`)).body.sheet;
    expect(sheet.checkpoint.state).toBe('done');
    const again = await put(technician, saves[1].code, w1.id, saves[1].body);
    expect(again.status, JSON.stringify(again.body)).toBe(200);
    expect(again.body.replayed).toBe(true);
  });

  it('flags a device clock more than 10 minutes off, on the reading and in the audit trail', async () => {
    const s = sampleIn(1, 1);
    const w1 = cp('Week 1');
    // The device clock is two hours behind: it stamps both times two hours early.
    const behind = (ms: number) => new Date(Date.now() - 2 * 3600_000 - ms).toISOString();
    const res = await put(technician, s.code, w1.id, { clientId: randomUUID(), deviceRecordedAt: behind(60_000), deviceSentAt: behind(0), entries: [{ studyAttributeId: attr('mass'), value: 49 }] });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    const mass = res.body.sheet.attributes.find((a: { attribute: { code: string } }) => a.attribute.code === 'mass').current;
    expect(mass.device.clockSkewed).toBe(true);
    expect(mass.device.clockOffsetS).toBeGreaterThan(7190);
    expect(mass.device.clockOffsetS).toBeLessThan(7300);
    const audit = await owner.get(`/api/audit?studyId=${study.id}`);
    const row = audit.body.rows.find((r: { entity: string; entityId: string }) => r.entity === 'observation' && r.entityId === String(mass.id));
    expect(row.newValue).toMatchObject({ deviceRecordedAt: mass.device.recordedAt });
    expect(row.sentence).toMatch(/recorded on the device at .+, sent from its outbox; the device clock was 120 min behind the server's\)/);
  });

  it('keeps a save once when the same one arrives twice at the same time', async () => {
    const w4 = cp('Week 4', 0);
    const s = sampleIn(0, 0);
    // Week 4 is not open yet: a formulator records early (allowed), twice at once from a device's outbox.
    const body = { clientId: randomUUID(), deviceRecordedAt: new Date().toISOString(), allowEarly: true, entries: [{ studyAttributeId: attr('ph'), value: 5.45 }] };
    const both = await Promise.all([put(formulator, s.code, w4.id, body), put(formulator, s.code, w4.id, body)]);
    expect(both.map((r) => r.status)).toEqual([200, 200]);
    expect(both.map((r) => r.body.replayed).sort()).toEqual([false, true]);
    expect(await t.db.select().from(observations).where(eq(observations.clientId, body.clientId))).toHaveLength(1);
  });

  it('a cell recorded meanwhile by someone else answers 409 naming the cell, as without a client id', async () => {
    const res = await put(technician, sampleIn(1, 1).code, cp('Week 1').id, { clientId: randomUUID(), deviceRecordedAt: new Date().toISOString(), entries: [{ studyAttributeId: attr('mass'), value: 48 }] });
    expect(res.status).toBe(409);
    expect(Object.keys(res.body.error.fields)).toEqual(['entries.0.value']);
  });
});

describe('outbox entries the server refuses', () => {
  it('answers 404 for a sample of another lab, even with a client id used there', async () => {
    const [used] = await t.db.select({ clientId: observations.clientId }).from(observations).where(sql`${observations.clientId} IS NOT NULL`).limit(1);
    const res = await put(otherOwner, sampleIn(1, 0).code, cp('Week 1').id, { clientId: used.clientId, deviceRecordedAt: new Date().toISOString(), entries: [{ studyAttributeId: attr('ph'), value: 5.5 }] });
    expect(res.status).toBe(404);
  });

  it('answers 409 with the reason for a checkpoint not open (Week 4 is weeks away)', async () => {
    const res = await put(technician, sampleIn(1, 0).code, cp('Week 4').id, { clientId: randomUUID(), deviceRecordedAt: new Date().toISOString(), entries: [{ studyAttributeId: attr('ph'), value: 5.5 }] });
    expect(res.status).toBe(409);
    expect(res.body.error.code).toBe('conflict');
    expect(res.body.error.message.length).toBeGreaterThan(5);
  });

  it('refuses a malformed client id or device time (400, naming the field)', async () => {
    const base = { entries: [{ studyAttributeId: attr('ph'), value: 5.5 }] };
    const badId = await put(technician, sampleIn(1, 0).code, cp('Week 1').id, { ...base, clientId: 'abc' });
    expect(badId.status).toBe(400);
    expect(Object.keys(badId.body.error.fields)).toEqual(['clientId']);
    const noZone = await put(technician, sampleIn(1, 0).code, cp('Week 1').id, { ...base, deviceRecordedAt: '2026-12-05T10:00:00' });
    expect(Object.keys(noZone.body.error.fields)).toEqual(['deviceRecordedAt']);
    const old = await put(technician, sampleIn(1, 0).code, cp('Week 1').id, { ...base, deviceSentAt: '1970-01-01T00:00:00Z' });
    expect(Object.keys(old.body.error.fields)).toEqual(['deviceSentAt']);
  });
});

describe('a photo from the outbox', () => {
  it('keeps one photo per client id: a resend answers the photos as they are', async () => {
    const s = sampleIn(1, 0);
    const url = `/api/samples/${s.code}/checkpoints/${cp('Week 1').id}/photos`;
    const jpeg = await sharp({ create: { width: 64, height: 48, channels: 3, background: '#d9c7a0' } }).jpeg().toBuffer();
    const clientId = randomUUID();
    const send = () => technician.agent.post(url).set('X-Keepwell-Request', '1').field('clientId', clientId).attach('photos', jpeg, 'jar.jpg');
    const first = await send();
    expect(first.status, JSON.stringify(first.body)).toBe(201);
    const again = await send();
    expect(again.status).toBe(200);
    expect(again.body.replayed).toBe(true);
    expect(again.body.photos).toHaveLength(1);
    expect(await t.db.select().from(photos).where(eq(photos.clientId, clientId))).toHaveLength(1);
    const bad = await technician.agent.post(url).set('X-Keepwell-Request', '1').field('clientId', 'nope').attach('photos', jpeg, 'jar.jpg');
    expect(bad.status).toBe(400);
  });
});

describe('the offline copy', () => {
  it('holds the Bench for 7 days and the Record sheet of each sample there, with criteria; only the lab\'s own', async () => {
    const res = await technician.get('/api/bench/offline');
    expect(res.status).toBe(200);
    expect(res.body.left).toBe(0);
    const codes = res.body.bench.groups.flatMap((g: { conditions: { checkpoints: { id: number; samples: { code: string }[] }[] }[] }) =>
      g.conditions.flatMap((c) => c.checkpoints.flatMap((cp) => cp.samples.map((s) => `${s.code}@${cp.id}`))),
    );
    expect(codes.length).toBeGreaterThan(0);
    expect(res.body.sheets.map((s: { sample: { code: string }; checkpoint: { id: number } }) => `${s.sample.code}@${s.checkpoint.id}`).sort()).toEqual([...codes].sort());
    const sheet = res.body.sheets[0];
    expect(sheet.attributes.map((a: { criterion: { kind: string } }) => a.criterion.kind)).toEqual(['range', 'range']);
    const other = await otherOwner.get('/api/bench/offline');
    expect(other.status).toBe(200);
    expect(other.body.sheets.some((s: { sample: { study: { id: number } } }) => s.sample.study.id === study.id)).toBe(false);
  });
});
