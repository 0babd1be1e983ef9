/** A batch records each line's raw-material lot and supplier, and names the studies that test it. Invented lab data. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { auditLog } from '../../server/db/schema';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;
let batchId: number;

beforeAll(async () => {
  t = await createTestApp();
  [formulator, technician, otherOwner] = await Promise.all([t.signIn(DEMO.formulator), t.signIn(DEMO.technician), t.signIn(DEMO.otherOwner)]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  // Made through the API, so the formula snapshot has its lines.
  const res = await formulator.post(`/api/variants/${cat.variantIds[0]}/batches`, { lotCode: 'LOTS-1', madeOn: '2026-01-05', sizeGrams: 500, packaging: '60 mL PET jar' });
  expect(res.status, JSON.stringify(res.body)).toBe(201);
  batchId = res.body.batch.id;
});
afterAll(async () => t?.close());

describe('raw-material lots', () => {
  it('a new batch has no lots and no studies yet', async () => {
    const res = await technician.get(`/api/batches/${batchId}`);
    expect(res.status).toBe(200);
    expect(res.body.lots).toEqual([]);
    expect(res.body.studies).toEqual([]);
  });

  it('a formulator records the lot and supplier of each line; the audit row keeps before and after', async () => {
    const res = await formulator.put(`/api/batches/${batchId}/lots`, { lots: [{ position: 1, lot: ' W-2291 ', supplier: 'Tap, filtered' }] });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.lots).toEqual([{ position: 1, lot: 'W-2291', supplier: 'Tap, filtered' }]);
    const again = await formulator.put(`/api/batches/${batchId}/lots`, { lots: [{ position: 1, lot: 'W-2292', supplier: '' }] });
    expect(again.body.lots).toEqual([{ position: 1, lot: 'W-2292', supplier: '' }]);
    const rows = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'batch'), eq(auditLog.entityId, String(batchId)), eq(auditLog.action, 'update')));
    expect(rows.at(-1)!.oldValue).toEqual({ materialLots: [{ position: 1, lot: 'W-2291', supplier: 'Tap, filtered' }] });
    // A line with neither is left out.
    expect((await formulator.put(`/api/batches/${batchId}/lots`, { lots: [{ position: 1, lot: '', supplier: '' }] })).body.lots).toEqual([]);
  });

  it('refuses a line the formula does not have, a line twice, technicians and other labs', async () => {
    const bad = await formulator.put(`/api/batches/${batchId}/lots`, { lots: [{ position: 1, lot: 'A', supplier: '' }, { position: 9, lot: 'B', supplier: '' }, { position: 1, lot: 'C', supplier: '' }] });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields).toEqual({ 'lots.1.position': expect.stringMatching(/No such line/), 'lots.2.position': 'Listed twice' });
    const long = await formulator.put(`/api/batches/${batchId}/lots`, { lots: [{ position: 1, lot: 'x'.repeat(61), supplier: '' }] });
    expect(long.body.error.fields).toHaveProperty(['lots.0.lot']);
    expect((await technician.put(`/api/batches/${batchId}/lots`, { lots: [] })).status).toBe(403);
    expect((await otherOwner.put(`/api/batches/${batchId}/lots`, { lots: [] })).status).toBe(404);
  });

  it('the batch names the studies that use it', async () => {
    const plan = { ...planFor(cat), batchIds: [batchId], title: 'Uses LOTS-1' };
    const s = await formulator.post('/api/studies', plan);
    expect(s.status, JSON.stringify(s.body)).toBe(201);
    const res = await technician.get(`/api/batches/${batchId}`);
    expect(res.body.studies).toEqual([{ id: s.body.study.id, title: 'Uses LOTS-1', status: 'draft', startDate: '2026-11-02' }]);
  });
});
