import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client, technician: Client, owner: Client, otherOwner: Client;
let cat: Catalogue;
let studyId: number;

const W = (n: number) => ({ unit: 'week' as const, n });

beforeAll(async () => {
  t = await createTestApp();
  [formulator, technician, owner, otherOwner] = await Promise.all([
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.owner),
    t.signIn(DEMO.otherOwner),
  ]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
  // Started 13 weeks ago: every 12-week checkpoint has come due.
  const start = addDays(localDateInZone(new Date(), 'Europe/Berlin'), -91);
  const offsets = [W(1), W(2), W(4), W(8), W(12)]; // after the study's initial test
  const draft = await formulator.post('/api/studies', {
    productId: cat.productId,
    title: 'Analysis study',
    startDate: start,
    batchIds: cat.batchIds,
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', offsets },
      { conditionId: cat.conditions.oven45, role: 'accelerated', offsets },
    ],
    attributes: [
      { attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } },
      { attributeId: cat.attributeIds.separation, criterion: { kind: 'worst_grade', grade: 1 } },
    ],
  });
  studyId = draft.body.study.id;
  const study = (await formulator.post(`/api/studies/${studyId}/start`)).body.study;
  const [ph, sep] = study.attributes.map((a: { id: number }) => a.id);
  // Variant A holds at 45 °C; variant B separates at week 8 (grade 3). Invented test data.
  for (const cp of study.checkpoints) {
    for (const s of study.samples.filter((x: { studyConditionId: number | null }) => x.studyConditionId === cp.studyConditionId)) {
      const isB = s.batchId === cat.batchIds[1];
      const oven = cp.studyConditionId === study.conditions[1].id;
      const weeks = cp.offset.unit === 'week' ? cp.offset.n : 0;
      const grade = isB && oven && weeks >= 8 ? 3 : 0;
      const res = await formulator.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, {
        entries: [
          { studyAttributeId: ph, value: Math.round((5.5 - (oven ? 0.02 : 0.005) * weeks) * 100) / 100 },
          { studyAttributeId: sep, value: grade },
        ],
      });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
    }
  }
});
afterAll(async () => t?.close());

describe('study analysis', () => {
  it('suggests a shelf life per variant with its reasons: Q10 projection for the variant that holds, a failure for the one that separates', async () => {
    const res = await formulator.get(`/api/studies/${studyId}/analysis`);
    expect(res.status).toBe(200);
    const a = res.body.analysis;
    expect(a.q10).toBe(2);
    const [vA, vB] = a.variants;
    const sA = a.suggestions.find((s: { variantId: number }) => s.variantId === vA.id).result;
    const sB = a.suggestions.find((s: { variantId: number }) => s.variantId === vB.id).result;
    // 12 weeks passed at 45 °C with Q10 = 2 projects 48 weeks at 25 °C = 11.04 months -> 11
    // (common practice, no published source).
    expect(sA.months).toBe(11);
    expect(sA.basis).toBe('projection_only');
    expect(sA.confidenceNote).toMatch(/real-time/i);
    expect(sA.reasons.some((r: { method: string }) => r.method === 'q10')).toBe(true);
    expect(sA.caution).toMatch(/safety assessor/);
    // Variant B's last passing 45 °C checkpoint is week 4: 4 weeks x 4 = 16 weeks = 3.68 months -> 3.
    expect(sB.months).toBe(3);
    const ff = a.firstFailures.find((f: { variantId: number; studyConditionId: number }) => f.variantId === vB.id && f.studyConditionId === a.conditions[1].id);
    expect(ff).toMatchObject({ label: 'Week 8', attributes: ['Separation'] });
    expect(ff.dataPoints).toBeGreaterThan(0);
    expect(a.series.length).toBeGreaterThan(0);
    expect(a.limits.find((l: { variantId: number }) => l.variantId === vA.id).limit).toMatchObject({ lower: 5, upper: 6 });
  });

  it('takes a Q10 override and refuses a nonsense one', async () => {
    const q3 = await formulator.get(`/api/studies/${studyId}/analysis?q10=3`);
    expect(q3.body.analysis.suggestions[0].result.months).toBeGreaterThan(11);
    expect((await formulator.get(`/api/studies/${studyId}/analysis?q10=0`)).status).toBe(400);
    expect((await formulator.get(`/api/studies/${studyId}/analysis?q10=-2`)).status).toBe(400);
  });

  it('is for formulators and owners of the lab only', async () => {
    expect((await owner.get(`/api/studies/${studyId}/analysis`)).status).toBe(200);
    expect((await technician.get(`/api/studies/${studyId}/analysis`)).status).toBe(403);
    expect((await otherOwner.get(`/api/studies/${studyId}/analysis`)).status).toBe(404);
  });
});
