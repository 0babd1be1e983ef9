/**
 * The demo lab `npm start` loads (server/demo/, invented data) is shaped as the issues ask:
 * three running studies at different ages so the Bench has overdue, due and upcoming work;
 * one variant separating at 45 °C by week 8 while the other holds; a pH drifting towards its
 * limit at 25 °C; photos; and one study already decided with a signature that still covers its
 * data. Also every demo page the app links to answers: each batch, each photo.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { StudyAnalysis } from '../../shared/schemas/analysis';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client;
let studies: { id: number; title: string; status: string }[];

beforeAll(async () => {
  t = await createTestApp({}, { demo: 'full' });
  [owner, formulator, technician] = await Promise.all([t.signIn(DEMO.owner), t.signIn(DEMO.formulator), t.signIn(DEMO.technician)]);
  studies = (await technician.get('/api/studies')).body.studies;
}, 120_000);
afterAll(async () => t?.close());

const byTitle = (s: string) => studies.find((x) => x.title.includes(s))!;

describe('the demo lab', () => {
  it('has three running studies and one decided; the Bench shows overdue, due and upcoming work', async () => {
    expect(studies.filter((s) => s.status === 'running')).toHaveLength(3);
    expect(studies.filter((s) => s.status === 'decided')).toHaveLength(1);
    const bench = await technician.get('/api/bench');
    expect(bench.status).toBe(200);
    expect(bench.body.counts.overdue).toBeGreaterThan(0);
    expect(bench.body.counts.due).toBeGreaterThan(0);
    expect(bench.body.counts.upcoming).toBeGreaterThan(0);
  });

  it('every batch page and every photo it links to answers', async () => {
    const batches = (await technician.get('/api/batches')).body.batches as { id: number; lotCode: string }[];
    expect(batches.length).toBeGreaterThanOrEqual(5);
    for (const b of batches) {
      const res = await technician.get(`/api/batches/${b.id}`);
      expect(res.status, `${b.lotCode}: ${JSON.stringify(res.body).slice(0, 200)}`).toBe(200);
      expect(res.body.snapshot.lines.length, b.lotCode).toBeGreaterThan(0);
    }
    const withPhotos = byTitle('A vs B');
    const photos = (await technician.get(`/api/studies/${withPhotos.id}/photos`)).body.photos as { id: number; uploadedAt: string }[];
    expect(photos.length).toBeGreaterThan(0);
    for (const p of photos) {
      const full = await technician.get(`/api/photos/${p.id}`);
      expect(full.status).toBe(200);
      expect(full.headers['content-type']).toBe('image/webp'); // the display copy, made on first view for the demo's photos
      expect((await technician.get(`/api/photos/${p.id}/original`)).headers['content-type']).toBe('image/jpeg');
      expect((await technician.get(`/api/photos/${p.id}/thumb`)).headers['content-type']).toBe('image/webp');
    }
    // Taken at their checkpoints, not all at the moment the demo was loaded.
    expect(new Set(photos.map((p) => p.uploadedAt.slice(0, 10))).size).toBeGreaterThan(1);
  });

  it('A separates at 45 °C by week 8 while B holds; the control is not counted as a stress test', async () => {
    const s = byTitle('A vs B');
    const a: StudyAnalysis = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis;
    const oven = a.conditions.find((c) => c.setpointC === 45)!;
    const [vA, vB] = ['A', 'B'].map((code) => a.variants.find((v) => v.code === code)!);
    const first = (v: { id: number }) => a.firstFailures.find((f) => f.variantId === v.id && f.studyConditionId === oven.id)!;
    expect(first(vA).label).toBe('Week 8');
    expect(first(vA).attributes).toContain('Separation');
    expect(first(vB).label).toBeNull();
    for (const { result } of a.suggestions) {
      const control = result.reasons.filter((r) => r.gateOf === 'control');
      expect(control.map((r) => r.condition)).toEqual([a.conditions.find((c) => c.role === 'control')!.name]);
    }
  });

  it('the real-time pH drifts towards its lower limit at 25 °C and gives a regression figure', async () => {
    const s = byTitle('real time');
    const a: StudyAnalysis = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis;
    const ph = a.attributes.find((x) => x.code === 'ph')!;
    const rt = a.regressions.find((r) => r.studyAttributeId === ph.id && r.months != null)!;
    expect(rt).toBeDefined();
    expect(rt.lines[0].slope).toBeLessThan(0); // pH per month
    expect(rt.months).toBeGreaterThan(6);
    expect(rt.months).toBeLessThan(60);
  });

  it('one study is decided, with signatures that still cover its data', async () => {
    const s = studies.find((x) => x.status === 'decided')!;
    const review = await owner.get(`/api/studies/${s.id}/review`);
    expect(review.status).toBe(200);
    const current = review.body.review.decisions.filter((d: { supersededById: number | null }) => d.supersededById == null);
    expect(current.length).toBeGreaterThan(0);
    expect(current.every((d: { coversCurrentData: boolean }) => d.coversCurrentData)).toBe(true);
  });

  it('every study has one initial test per batch, and every pull is paired with a same-day control reading', async () => {
    for (const s of studies) {
      const d = (await formulator.get(`/api/studies/${s.id}`)).body.study;
      const initial = d.checkpoints.filter((c: { kind: string }) => c.kind === 'initial');
      expect(initial, s.title).toHaveLength(1);
      expect(d.checkpoints.some((c: { kind: string; label: string }) => c.kind === 'pull' && c.label === 'Day 0'), s.title).toBe(false);
      const retained = d.samples.filter((x: { studyConditionId: number | null }) => x.studyConditionId == null);
      expect(retained.map((x: { batchId: number }) => x.batchId).sort(), s.title).toEqual(d.batches.map((b: { id: number }) => b.id).sort());
      const control = d.conditions.find((c: { role: string }) => c.role === 'control');
      const byId = new Map(d.checkpoints.map((c: { id: number }) => [c.id, c]));
      for (const cp of d.checkpoints.filter((c: { kind: string; studyConditionId: number }) => c.kind === 'pull' && c.studyConditionId !== control.id)) {
        const paired = byId.get(cp.controlCheckpointId) as { dueDate: string; studyConditionId: number | null } | undefined;
        expect(paired, `${s.title} ${cp.label}`).toBeTruthy();
        expect(paired!.dueDate).toBe(cp.dueDate);
      }
    }
  });

  it('shows one closed and one open out-of-specification investigation, and nothing fails without one', async () => {
    const s = byTitle('A vs B');
    const d = (await formulator.get(`/api/studies/${s.id}`)).body.study;
    const statuses = d.investigations.map((i: { status: string }) => i.status);
    expect(statuses.filter((x: string) => x === 'closed').length).toBeGreaterThanOrEqual(1);
    expect(statuses.filter((x: string) => x === 'open')).toHaveLength(1);
    const open = d.investigations.find((i: { status: string }) => i.status === 'open');
    expect(open).toMatchObject({ benchStep: 'remeasured', attribute: { name: expect.stringMatching(/viscosity/i) } });
    // Every failing reading of every demo study has its investigation.
    for (const st of studies) {
      const a = (await formulator.get(`/api/studies/${st.id}/analysis`)).body.analysis as StudyAnalysis;
      const failing = new Set(a.series.flatMap((x) => x.points.filter((p) => p.verdict === 'fail').map((p) => `${p.sampleCode}:${p.checkpointId}:${x.studyAttributeId}`)));
      const inv = (await formulator.get(`/api/studies/${st.id}/investigations`)).body.investigations as { sampleCode: string; checkpoint: { id: number }; attribute: { id: number } }[];
      expect(new Set(inv.map((i) => `${i.sampleCode}:${i.checkpoint.id}:${i.attribute.id}`)), st.title).toEqual(failing);
    }
    expect((await formulator.get('/api/notifications')).body.unread).toBeGreaterThan(0);
  });
});

describe('the demo product file (issue #17)', () => {
  it('shows one low-risk variant (the anhydrous body butter) and one not (hand cream B) with a challenge-test report', async () => {
    const { riskAssessments, variants, products } = await import('../../server/db/schema');
    const { eq } = await import('drizzle-orm');
    const rows = await t.db
      .select({ id: variants.id, code: variants.code, product: products.name, lowRisk: riskAssessments.lowRisk })
      .from(riskAssessments)
      .innerJoin(variants, eq(variants.id, riskAssessments.variantId))
      .innerJoin(products, eq(products.id, variants.productId))
      .where(eq(riskAssessments.labId, t.labs[0].id));
    const butter = rows.find((r) => r.product.includes('body butter'))!;
    const cream = rows.find((r) => r.product.includes('hand cream') && r.code === 'B')!;
    const butterRisk = (await technician.get(`/api/variants/${butter.id}/risk`)).body.risk;
    // ISO 29621 (public summary): an anhydrous product is microbiologically low risk.
    expect(butterRisk.assessment.text).toMatch(/^Low risk by anhydrous/);
    expect(butterRisk.assessment.outOfDate).toEqual([]);
    const creamRisk = (await technician.get(`/api/variants/${cream.id}/risk`)).body.risk;
    expect(creamRisk.assessment.lowRisk).toBe(false);
    const docs = (await technician.get(`/api/variants/${cream.id}/documents`)).body.documents;
    expect(docs).toHaveLength(1);
    expect(docs[0]).toMatchObject({ kind: 'challenge_test', criteria: 'A', mime: 'application/pdf' });
    const file = await technician.get(docs[0].url);
    expect(file.status).toBe(200);
    expect(file.headers['content-disposition']).toMatch(/^attachment/);
  });
});
