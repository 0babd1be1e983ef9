/**
 * The product file: the microbial-risk panel (thresholds: ISO 29621 as summarised publicly by testing
 * laboratories) and documents (PDF and images only, checked by their bytes; SHA-256 listed; another
 * lab's ids answer 404; a refused upload keeps nothing).
 */
import { createHash } from 'node:crypto';
import { eq, sql } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { auditLog, formulaLines, ingredients, productDocuments, riskAssessments } from '../../server/db/schema';
import { simplePdf } from '../../server/services/pdf-engine';
import { bytesOf, createTestApp, DEMO, DEMO_PASSWORD, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';
import { addDays, localDateInZone } from '../../shared/compute/schedule';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let variantA: number, variantB: number, studyId: number;
let pdf: Buffer;

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');
const docCount = async () => Number((await t.db.select({ n: sql<number>`count(*)` }).from(productDocuments))[0].n);
const storedFiles = async () => {
  const keys: string[] = [];
  for await (const o of t.files.list('documents/')) keys.push(o.key);
  return keys;
};

const challenge = {
  kind: 'challenge_test',
  title: 'Challenge test, variant A',
  documentDate: '2026-11-20',
  author: 'Contract lab (invented)',
  summary: 'All five organisms meet criterion A.',
  criteria: 'A',
  organisms: JSON.stringify([{ organism: 'Pseudomonas aeruginosa', result: 'meets' }]),
};
const upload = (c: Client, path: string, file: Buffer, name: string, fields: Record<string, string> = challenge) => {
  let req = c.agent.post(path).set('X-Keepwell-Request', '1');
  for (const [k, v] of Object.entries(fields)) req = req.field(k, v);
  return req.attach('file', file, name);
};

const panel = {
  ph: 5.5,
  phSource: 'bench meter',
  waterActivity: 0.97,
  waterActivitySource: null,
  fillingTempC: 40,
  fillingTempSource: null,
  pack: 'open_jar',
  solventBased: false,
  oxidising: false,
  inUseMonths: null,
  decidedPaoMonths: null,
};

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([t.signIn(DEMO.owner), t.signIn(DEMO.formulator), t.signIn(DEMO.technician), t.signIn(DEMO.otherOwner)]);
  const cat = await makeCatalogue(t.db, t.labs[0].id);
  [variantA, variantB] = cat.variantIds;
  const draft = await formulator.post('/api/studies', planFor(cat));
  studyId = draft.body.study.id;
  pdf = await simplePdf('Challenge test report (test)', ['Invented for a test.']);
});
afterAll(async () => {
  await t?.close();
});

describe('the risk panel', () => {
  it('an all-water test formula at pH 5.5 in a jar is not low risk; the formula gives 100 % water', async () => {
    const res = await formulator.put(`/api/variants/${variantA}/risk`, panel);
    expect(res.status).toBe(200);
    expect(res.body.risk.formula.waterPercent).toBe(100);
    expect(res.body.risk.assessment.lowRisk).toBe(false);
    expect(res.body.risk.assessment.text).toMatch(/ISO 11930 is expected/);
    expect(res.body.risk.assessment.suggestedPao.months).toBe(6);
    expect(res.body.risk.caution).toMatch(/not a decision/);
    const [row] = await t.db.select().from(auditLog).where(eq(auditLog.entity, 'risk_assessment'));
    expect(row.action).toBe('create');
  });

  it('pH 2.9 (at most 3, ISO 29621 public summary) makes it low risk', async () => {
    const res = await formulator.put(`/api/variants/${variantB}/risk`, { ...panel, ph: 2.9, decidedPaoMonths: 12 });
    expect(res.body.risk.assessment.lowRisk).toBe(true);
    expect(res.body.risk.assessment.decidedPaoMonths).toBe(12);
  });

  it('impossible values answer 400 naming each field; nothing kept', async () => {
    const before = await t.db.select().from(riskAssessments);
    const res = await formulator.put(`/api/variants/${variantA}/risk`, { ...panel, ph: 14.5, waterActivity: 1.2, alcoholPercent: 101, decidedPaoMonths: 9 });
    expect(res.status).toBe(400);
    expect(Object.keys(res.body.error.fields).sort()).toEqual(['alcoholPercent', 'decidedPaoMonths', 'ph', 'waterActivity']);
    expect(res.body.error.fields.alcoholPercent).toMatch(/100/);
    expect(await t.db.select().from(riskAssessments)).toEqual(before);
  });

  it('a technician reads it but cannot change it; another lab gets 404', async () => {
    expect((await technician.get(`/api/variants/${variantA}/risk`)).status).toBe(200);
    expect((await technician.put(`/api/variants/${variantA}/risk`, panel)).status).toBe(403);
    expect((await otherOwner.get(`/api/variants/${variantA}/risk`)).status).toBe(404);
    expect((await otherOwner.put(`/api/variants/${variantA}/risk`, panel)).status).toBe(404);
  });

  it("proposes the latest batch's filling temperature and pack; a filling temperature over 150 °C is refused", async () => {
    const bad = await formulator.post(`/api/variants/${variantB}/batches`, { lotCode: 'HOT-0', madeOn: '2026-11-03', sizeGrams: 1000, packaging: '30 mL airless pump', fillingTempC: 151 });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.fillingTempC).toBe('At most 150 °C');
    const ok = await formulator.post(`/api/variants/${variantB}/batches`, { lotCode: 'HOT-1', madeOn: '2026-11-03', sizeGrams: 1000, packaging: '30 mL airless pump', fillingTempC: 80 });
    expect(ok.status, JSON.stringify(ok.body)).toBe(201);
    const res = await formulator.get(`/api/variants/${variantB}/risk`);
    expect(res.body.risk.proposed).toMatchObject({ fillingTempC: 80, fillingTempSource: 'Batch HOT-1', pack: 'airless_pump', packSource: 'Batch HOT-1: 30 mL airless pump' });
  });

  it('a formula change that touches a factor marks the assessment out of date', async () => {
    const [ing] = await t.db.insert(ingredients).values({ labId: t.labs[0].id, tradeName: 'Ethanol 96', inciName: 'Alcohol', function: 'solvent' }).$returningId();
    await t.db.update(formulaLines).set({ percent: 70 }).where(eq(formulaLines.variantId, variantA));
    await t.db.insert(formulaLines).values({ labId: t.labs[0].id, variantId: variantA, position: 1, ingredientId: ing.id, phase: 'A', percent: 30 });
    const res = await formulator.get(`/api/variants/${variantA}/risk`);
    expect(res.body.risk.formula).toMatchObject({ waterPercent: 70, alcoholPercent: 30 });
    expect(res.body.risk.assessment.outOfDate).toEqual(['water share in the formula', 'alcohol share']);
  });
});

describe('documents', () => {
  it('a real PDF is kept with its SHA-256, listed, and downloads as an attachment', async () => {
    const res = await upload(formulator, `/api/variants/${variantA}/documents`, pdf, 'PET report.pdf');
    expect(res.status).toBe(201);
    const doc = res.body.documents[0];
    expect(doc).toMatchObject({ kind: 'challenge_test', criteria: 'A', sha256: sha256(pdf), mime: 'application/pdf', bytes: pdf.length });
    const file = await bytesOf(technician, doc.url);
    expect(file.status).toBe(200);
    expect(file.headers['content-type']).toBe('application/pdf');
    expect(file.headers['content-disposition']).toBe('attachment; filename="PET report.pdf"');
    expect(file.headers['x-content-type-options']).toBe('nosniff');
    expect(sha256(file.body as Buffer)).toBe(sha256(pdf));
    const [row] = await t.db.select().from(auditLog).where(eq(auditLog.entity, 'product_document'));
    expect((row.newValue as { sha256: string }).sha256).toBe(sha256(pdf));
  });

  it('an image is accepted on a study', async () => {
    const png = await sharp({ create: { width: 40, height: 30, channels: 3, background: '#fff' } }).png().toBuffer();
    const res = await upload(formulator, `/api/studies/${studyId}/documents`, png, 'certificate.png', {
      kind: 'supplier_certificate',
      title: 'Shea butter certificate',
      documentDate: '2026-10-01',
      author: 'Supplier',
      summary: 'Certificate of analysis.',
    });
    expect(res.status).toBe(201);
    expect(res.body.productFile.documents.map((d: { kind: string }) => d.kind).sort()).toEqual(['challenge_test', 'supplier_certificate']);
  });

  it('refuses a fake PDF, a text file, a truncated PDF and an oversize file; nothing kept', async () => {
    const n = await docCount();
    const files = await storedFiles();
    const fake = await upload(formulator, `/api/variants/${variantA}/documents`, Buffer.from('just text pretending to be a report'), 'report.pdf');
    expect(fake.status).toBe(415);
    expect(fake.body.error.fields.file).toMatch(/not a PDF/);
    const html = await upload(formulator, `/api/variants/${variantA}/documents`, Buffer.from('<html><script>alert(1)</script></html>'), 'x.pdf');
    expect(html.status).toBe(415);
    const cut = await upload(formulator, `/api/variants/${variantA}/documents`, pdf.subarray(0, Math.floor(pdf.length / 2)), 'cut.pdf');
    expect(cut.status).toBe(415);
    expect(cut.body.error.fields.file).toMatch(/not a complete PDF/);
    const big = Buffer.concat([pdf, Buffer.alloc(10 * 1024 * 1024)]);
    const over = await upload(formulator, `/api/variants/${variantA}/documents`, big, 'big.pdf');
    expect(over.status).toBe(413);
    expect(await docCount()).toBe(n);
    expect(await storedFiles()).toEqual(files);
  });

  it('refuses bad fields with their names, and a challenge test without its criteria', async () => {
    const res = await upload(formulator, `/api/variants/${variantA}/documents`, pdf, 'r.pdf', { ...challenge, criteria: '', documentDate: '2026-02-30', title: '' });
    expect(res.status).toBe(400);
    expect(Object.keys(res.body.error.fields)).toEqual(expect.arrayContaining(['documentDate', 'title', 'criteria']));
    const noCriteria = { ...challenge } as Record<string, string>;
    delete noCriteria.criteria;
    delete noCriteria.organisms;
    const res2 = await upload(formulator, `/api/variants/${variantA}/documents`, pdf, 'r.pdf', noCriteria);
    expect(res2.status).toBe(400);
    expect(res2.body.error.fields.criteria).toMatch(/ISO 11930/);
  });

  it('another lab: 404 for the variant, the study and the file; a technician cannot attach', async () => {
    const [doc] = await t.db.select().from(productDocuments).limit(1);
    expect((await otherOwner.get(`/api/documents/${doc.id}/file`)).status).toBe(404);
    expect((await otherOwner.get(`/api/variants/${variantA}/documents`)).status).toBe(404);
    expect((await otherOwner.get(`/api/studies/${studyId}/product-file`)).status).toBe(404);
    expect((await upload(otherOwner, `/api/variants/${variantA}/documents`, pdf, 'r.pdf')).status).toBe(404);
    expect((await upload(otherOwner, `/api/studies/${studyId}/documents`, pdf, 'r.pdf')).status).toBe(404);
    expect((await upload(technician, `/api/variants/${variantA}/documents`, pdf, 'r.pdf')).status).toBe(403);
  });

  it("the study's product file lists expected and present documents per variant with the PAO", async () => {
    const res = await owner.get(`/api/studies/${studyId}/product-file`);
    expect(res.status).toBe(200);
    const [a, b] = res.body.productFile.variants;
    // A's assessment is out of date (alcohol added): its challenge test is still expected, and present.
    expect(a.expected.find((e: { kind: string }) => e.kind === 'challenge_test')).toMatchObject({ present: true });
    // B is low risk by pH: no challenge test expected; its safety assessment is missing.
    expect(b.expected.map((e: { kind: string }) => e.kind)).not.toContain('challenge_test');
    expect(b.expected.find((e: { kind: string }) => e.kind === 'safety_assessment')).toMatchObject({ present: false });
    expect(b.paoMonths).toBe(12);
  });
});

describe('signing a release', () => {
  it('needs a comment when the risk panel expects a challenge test and none is attached (the "needs a comment" rule)', async () => {
    const cat = await makeCatalogue(t.db, t.labs[0].id, 'Sign cream');
    const [x, y] = cat.variantIds;
    await formulator.put(`/api/variants/${x}/risk`, panel);
    await formulator.put(`/api/variants/${y}/risk`, { ...panel, ph: 2.5 });
    const id = (await formulator.post('/api/studies', planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -3)))).body.study.id;
    const study = (await formulator.post(`/api/studies/${id}/start`)).body.study;
    // The initial test: pH 5.4 on each batch's retained sample (invented); the panel proposes it with its source.
    for (const cp of study.checkpoints.filter((c: { kind: string }) => c.kind === 'initial')) {
      for (const smp of study.samples.filter((x: { studyConditionId: number | null }) => x.studyConditionId == null)) {
        const saved = await technician.put(`/api/samples/${smp.code}/checkpoints/${cp.id}/observations`, {
          entries: study.attributes.map((a: { id: number; code: string }) => ({ studyAttributeId: a.id, value: a.code === 'ph' ? 5.4 : a.code === 'separation' ? 0 : 'no_change' })),
        });
        expect(saved.status, JSON.stringify(saved.body)).toBe(200);
      }
    }
    const proposed = (await technician.get(`/api/variants/${x}/risk`)).body.risk.proposed;
    expect(proposed).toMatchObject({ ph: 5.4, phSource: 'Initial test of "Test study", mean of 1 reading', waterActivity: null });
    const sub = await formulator.post(`/api/studies/${id}/submit`, {
      summary: 'Ending early for the product file test.',
      proposals: [x, y].map((variantId) => ({ variantId, shelfLifeMonths: 12, paoMonths: 6 })),
      openCheckpointsReason: 'Test only',
    });
    expect(sub.status, JSON.stringify(sub.body)).toBe(200);
    const file = (await formulator.get(`/api/studies/${id}/product-file`)).body.productFile;
    expect(file.variants[0].expected[0]).toMatchObject({ kind: 'challenge_test', present: false });
    const attached = await upload(formulator, `/api/studies/${id}/documents`, pdf, 'safety.pdf', {
      kind: 'safety_assessment',
      title: 'Safety assessment',
      documentDate: '2026-11-25',
      author: 'Safety assessor (invented)',
      summary: 'Safe for the intended use.',
    });
    expect(attached.status).toBe(201);
    const sign = (body: object) => owner.post(`/api/studies/${id}/decisions`, { password: DEMO_PASSWORD, outcome: 'released', shelfLifeMonths: 12, ...body });
    const refused = await sign({ variantId: x });
    expect(refused.status).toBe(400);
    expect(refused.body.error.fields.comment).toMatch(/No challenge test is attached for variant A/);
    // Low risk by pH: no challenge test expected, no comment needed.
    expect((await sign({ variantId: y })).status).toBe(201);
    expect((await sign({ variantId: x, comment: 'Challenge test ordered; release limited to the pilot run.' })).status).toBe(201);
    // Each signature's audit row names the documents it covered, with their SHA-256.
    // The PAO is held to the signed shelf life: a hand-entered 24-month in-use test (no in-use study) in an airless pump
    // would give 24 months, the release signed 12 (common practice, no published source; see period-after-opening.ts).
    const capped = (await formulator.put(`/api/variants/${y}/risk`, { ...panel, ph: 2.5, pack: 'airless_pump', inUseMonths: 24 })).body.risk;
    expect(capped.inUse).toBeNull();
    expect(capped.shelfLife).toEqual({ months: 12, source: 'signed decision on "Test study"' });
    expect(capped.assessment.suggestedPao.months).toBe(12);
    expect(capped.assessment.suggestedPao.reasons.join(' ')).toMatch(/Not longer than the shelf life of 12 months/);
    const signed = await t.db.select().from(auditLog).where(eq(auditLog.action, 'sign'));
    expect(signed.map((r) => (r.newValue as { documents: { kind: string; sha256: string }[] }).documents.map((d) => `${d.kind}:${d.sha256}`))).toEqual([
      [`safety_assessment:${sha256(pdf)}`],
      [`safety_assessment:${sha256(pdf)}`],
    ]);
  });
});

describe('in-use data from an in-use study condition', () => {
  it('a fail at week 8 of the in-use condition stops the covered time at week 4 (28 / 30.4375 days per month = 0.9) and the study wins over a typed value', async () => {
    const cat = await makeCatalogue(t.db, t.labs[0].id, 'In-use cream');
    const [x] = cat.variantIds;
    const cond = await formulator.post('/api/storage-conditions', { kind: 'constant', name: 'In use, opened daily', setpointC: 22, toleranceC: 3, inUse: true });
    expect(cond.status, JSON.stringify(cond.body)).toBe(201);
    const plan = planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -70));
    plan.conditions = [
      plan.conditions[0],
      { conditionId: cond.body.condition.id, role: 'accelerated' as const, template: 'accelerated-12w', offsets: [{ unit: 'week', n: 4 }, { unit: 'week', n: 8 }] },
    ];
    const created = await formulator.post('/api/studies', plan);
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    const study = (await formulator.post(`/api/studies/${created.body.study.id}/start`)).body.study;
    const inUseSc = study.conditions.find((c: { conditionId: number }) => c.conditionId === cond.body.condition.id);
    const record = async (cpId: number, ph: number) => {
      for (const smp of study.samples.filter((s: { studyConditionId: number | null; variantId?: number }) => s.studyConditionId === inUseSc.id)) {
        const saved = await technician.put(`/api/samples/${smp.code}/checkpoints/${cpId}/observations`, {
          entries: study.attributes.map((a: { id: number; code: string }) => ({ studyAttributeId: a.id, value: a.code === 'ph' ? ph : a.code === 'separation' ? 0 : 'no_change' })),
        });
        expect(saved.status, JSON.stringify(saved.body)).toBe(200);
      }
    };
    const cps = study.checkpoints.filter((c: { studyConditionId: number | null; kind: string }) => c.studyConditionId === inUseSc.id && c.kind === 'pull');
    const at = (n: number) => cps.find((c: { offset: { n: number } }) => c.offset.n === n).id;
    for (const cp of study.checkpoints.filter((c: { kind: string }) => c.kind === 'initial')) {
      for (const smp of study.samples.filter((s: { studyConditionId: number | null }) => s.studyConditionId == null)) {
        await technician.put(`/api/samples/${smp.code}/checkpoints/${cp.id}/observations`, {
          entries: study.attributes.map((a: { id: number; code: string }) => ({ studyAttributeId: a.id, value: a.code === 'ph' ? 5.5 : a.code === 'separation' ? 0 : 'no_change' })),
        });
      }
    }
    // Week 4 not recorded yet: no months covered.
    expect((await formulator.get(`/api/variants/${x}/risk`)).body.risk.inUse.months).toBeNull();
    await record(at(4), 5.6);
    await record(at(8), 7.0); // pH moved 1.5 > 0.5: a fail
    const res = await formulator.put(`/api/variants/${x}/risk`, { ...panel, ph: 2.5, pack: 'airless_pump', inUseMonths: 24 });
    expect(res.status).toBe(200);
    const risk = res.body.risk;
    expect(risk.inUse.months).toBe(0.9);
    expect(risk.inUse.source).toMatch(/In-use condition "In use, opened daily" of "Test study".*A failure at week 8: covered up to week 4/);
    // The study's 0.9 months, not the typed 24, feed the PAO.
    expect(risk.assessment.suggestedPao.months).not.toBe(24);
  });
});
