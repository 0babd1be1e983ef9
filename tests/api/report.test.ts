import { execFileSync } from 'node:child_process';
import { mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, DEMO_PASSWORD, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client, owner: Client, technician: Client, otherOwner: Client;
let studyId: number;

beforeAll(async () => {
  t = await createTestApp();
  [formulator, owner, technician, otherOwner] = await Promise.all([t.signIn(DEMO.formulator), t.signIn(DEMO.owner), t.signIn(DEMO.technician), t.signIn(DEMO.otherOwner)]);
  const cat = await makeCatalogue(t.db, t.labs[0].id);
  const plan = planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -8));
  studyId = (await formulator.post('/api/studies', plan)).body.study.id;
  const study = (await formulator.post(`/api/studies/${studyId}/start`)).body.study;
  for (const cp of study.checkpoints.filter((c: { dueDate: string }) => c.dueDate <= localDateInZone(new Date(), 'Europe/Berlin'))) {
    for (const s of study.samples.filter((x: { studyConditionId: number }) => x.studyConditionId === cp.studyConditionId)) {
      await technician.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, {
        entries: study.attributes.map((a: { id: number; code: string }) => ({ studyAttributeId: a.id, value: a.code === 'ph' ? 5.5 : a.code === 'separation' ? 0 : 'no_change' })),
      });
    }
  }
  const variantIds = [...new Set(study.batches.map((b: { variant: { id: number } }) => b.variant.id))] as number[];
  await formulator.post(`/api/studies/${studyId}/submit`, { summary: 'Held at every condition so far.', proposals: variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 6 })), openCheckpointsReason: 'Report test ends early' });
  // Six months is longer than one week at 45 °C suggests: the comment says why (services/reviews.ts decide()).
  for (const v of variantIds) {
    const res = await owner.post(`/api/studies/${studyId}/decisions`, { variantId: v, outcome: 'released', shelfLifeMonths: 6, comment: 'Provisional, as earlier lots of this base held 6 months.', password: DEMO_PASSWORD });
    expect(res.status, JSON.stringify(res.body)).toBe(201);
  }
});
afterAll(async () => t?.close());

describe('stability report PDF', () => {
  it('opens, has numbered pages with the right text, and renders with pdftoppm', async () => {
    const res = await formulator.agent.get(`/api/studies/${studyId}/report.pdf`).buffer(true).parse((r, cb) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toBe('application/pdf');
    const pdf = res.body as Buffer;
    expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
    const dir = mkdtempSync(join(tmpdir(), 'kw-report-'));
    const file = join(dir, 'report.pdf');
    writeFileSync(file, pdf);
    const info = execFileSync('pdfinfo', [file]).toString();
    const pages = Number(/Pages:\s+(\d+)/.exec(info)![1]);
    expect(pages).toBeGreaterThanOrEqual(3);
    const text = execFileSync('pdftotext', ['-layout', file, '-']).toString();
    for (const s of ['Stability report', 'Test study', 'Storage conditions and chamber records', 'Every observation', 'Decision and signatures', 'Maya Lindqvist', 'approved for release', `Page 1 of ${pages}`, 'Audit summary']) {
      expect(text).toContain(s);
    }
    // round numbers only: no axis tick or limit with binary noise (5.016666666666667)
    expect(text).not.toMatch(/\d\.\d{6,}/);
    // the samples row says how many and in what, once
    const samples = text.split('\n').find((l) => /^\s*Samples\s/.test(l))!;
    expect(samples).toMatch(/\d+ samples/);
    expect(samples.match(/ g\b/g)?.length ?? 0).toBeLessThanOrEqual(1);
    // a chart per condition: months for storage, cycles for freeze-thaw
    expect(text).toContain('Months');
    execFileSync('pdftoppm', ['-png', '-r', '50', '-f', '1', '-l', '2', file, join(dir, 'page')]);
    expect(readdirSync(dir).filter((f) => f.endsWith('.png'))).toHaveLength(2);
  });

  it("is for members of the study's lab only", async () => {
    expect((await otherOwner.get(`/api/studies/${studyId}/report.pdf`)).status).toBe(404);
    expect((await t.client().get(`/api/studies/${studyId}/report.pdf`)).status).toBe(401);
  });
});
