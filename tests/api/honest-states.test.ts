/**
 * Say only what is true: a study without results says "no results yet", not "no failures"; a
 * submitted study owes nothing at the bench; a decided study's report says a pull never taken was
 * "not pulled, study ended". Invented lab data.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { gateSummary, type SuggestResult } from '../../shared/compute/suggest';
import { createTestApp, DEMO, DEMO_PASSWORD, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';

let t: TestApp;
let formulator: Client, owner: Client, technician: Client;
let cat: Catalogue;
const today = () => localDateInZone(new Date(), 'Europe/Berlin');

beforeAll(async () => {
  t = await createTestApp();
  [formulator, owner, technician] = await Promise.all([t.signIn(DEMO.formulator), t.signIn(DEMO.owner), t.signIn(DEMO.technician)]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
});
afterAll(async () => t?.close());

/** Fridge control, 45 °C oven and freeze-thaw (a stress test), started `daysAgo` days ago. */
async function startedStudy(daysAgo: number) {
  const plan = planFor(cat, addDays(today(), -daysAgo));
  plan.conditions.push({ conditionId: cat.conditions.freezeThaw, role: 'stress' as never, template: 'freeze-thaw-5', offsets: [{ unit: 'cycle' as never, n: 1 }, { unit: 'cycle' as never, n: 3 }] });
  const id = (await formulator.post('/api/studies', plan)).body.study.id as number;
  const res = await formulator.post(`/api/studies/${id}/start`);
  expect(res.status, JSON.stringify(res.body)).toBe(200);
  return res.body.study as {
    id: number;
    checkpoints: { id: number; dueDate: string; studyConditionId: number | null }[];
    samples: { code: string; studyConditionId: number | null }[];
    attributes: { id: number; code: string }[];
    batches: { variant: { id: number } }[];
  };
}

async function pdfText(studyId: number): Promise<string> {
  const res = await formulator.agent.get(`/api/studies/${studyId}/report.pdf`).buffer(true).parse((r, cb) => {
    const chunks: Buffer[] = [];
    r.on('data', (c: Buffer) => chunks.push(c));
    r.on('end', () => cb(null, Buffer.concat(chunks)));
  });
  expect(res.status).toBe(200);
  const file = join(mkdtempSync(join(tmpdir(), 'kw-honest-')), 'report.pdf');
  writeFileSync(file, res.body as Buffer);
  return execFileSync('pdftotext', ['-layout', file, '-']).toString();
}

describe('a study with no readings yet', () => {
  it('says "no results yet" for the stress test and the control, not "no failures", and does not repeat "No figure yet"', async () => {
    const s = await startedStudy(0);
    const res = await formulator.get(`/api/studies/${s.id}/analysis`);
    expect(res.status).toBe(200);
    const results: SuggestResult[] = res.body.analysis.suggestions.map((x: { result: SuggestResult }) => x.result);
    expect(results.length).toBeGreaterThan(0);
    for (const r of results) {
      expect(gateSummary(r.reasons, 'stress')).toMatch(/^Stress tests: no results yet \(Freeze-thaw \d+\)\.$/);
      expect(gateSummary(r.reasons, 'control')).toMatch(/^Control: no results yet \(4 °C control \d+\)\.$/);
      expect(r.basis).toBe('none');
      // Shown after the basis label "No figure yet": the note does not say it again.
      expect(r.confidenceNote).not.toMatch(/No figure yet/);
      expect(r.confidenceNote).toMatch(/^No results yet/);
    }
    // The review page's first failure per condition counts the readings, so it can say "no results yet" too.
    const ff: { studyConditionId: number; label: string | null; dataPoints: number }[] = res.body.analysis.firstFailures;
    expect(ff.length).toBeGreaterThan(0);
    for (const f of ff) expect(f).toMatchObject({ label: null, dataPoints: 0 });
  });
});

describe('a study submitted, then decided, with pulls never taken', () => {
  let s: Awaited<ReturnType<typeof startedStudy>>;

  beforeAll(async () => {
    s = await startedStudy(10);
    // Only the initial test is recorded: the week-1 pulls and cycle 3 are overdue, week 4 is upcoming.
    const initial = s.checkpoints[0];
    for (const smp of s.samples.filter((x) => x.studyConditionId == null)) {
      const res = await technician.put(`/api/samples/${smp.code}/checkpoints/${initial.id}/observations`, {
        entries: s.attributes.map((a) => ({ studyAttributeId: a.id, value: a.code === 'ph' ? 5.5 : a.code === 'separation' ? 0 : 'no_change' })),
      });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
    }
    const before = (await formulator.get('/api/studies')).body.studies.find((x: { id: number }) => x.id === s.id);
    expect(before.overdueCount).toBeGreaterThan(0);
  });

  it('with only the initial test recorded, the stress test and the control still say "no results yet" (the initial test is no pull of theirs)', async () => {
    const results: SuggestResult[] = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis.suggestions.map((x: { result: SuggestResult }) => x.result);
    expect(results.length).toBeGreaterThan(0);
    for (const r of results) {
      expect(gateSummary(r.reasons, 'stress')).toMatch(/^Stress tests: no results yet \(Freeze-thaw \d+\)\.$/);
      expect(gateSummary(r.reasons, 'control')).toMatch(/^Control: no results yet \(4 °C control \d+\)\.$/);
    }
    // Nor is it a reading of the condition in the first failure per condition.
    const ff: { dataPoints: number }[] = (await formulator.get(`/api/studies/${s.id}/analysis`)).body.analysis.firstFailures;
    expect(ff.length).toBeGreaterThan(0);
    for (const f of ff) expect(f.dataPoints).toBe(0);
  });

  it('once submitted for review it has nothing overdue at the bench', async () => {
    const variantIds = [...new Set(s.batches.map((b) => b.variant.id))];
    const sub = await formulator.post(`/api/studies/${s.id}/submit`, {
      summary: 'Ended early for the test.',
      proposals: variantIds.map((variantId) => ({ variantId, shelfLifeMonths: null })),
      openCheckpointsReason: 'The formula is withdrawn',
    });
    expect(sub.status, JSON.stringify(sub.body)).toBe(200);
    const row = (await formulator.get('/api/studies')).body.studies.find((x: { id: number }) => x.id === s.id);
    expect(row.status).toBe('in_review');
    expect(row.overdueCount).toBe(0);
    const bench = (await technician.get('/api/bench')).body;
    const onBench = bench.groups.flatMap((g: { conditions: { checkpoints: { study: { id: number } }[] }[] }) => g.conditions.flatMap((c) => c.checkpoints)).filter((c: { study: { id: number } }) => c.study.id === s.id);
    expect(onBench).toEqual([]);
  });

  it('the report of the decided study lists the pulls never taken as "Not pulled, study ended"; decisions are numbered from 1 in the study', async () => {
    // "Not released" says why: without a comment it is refused, naming the comment.
    const bare = await owner.post(`/api/studies/${s.id}/decisions`, { variantId: s.batches[0].variant.id, outcome: 'not_released', password: DEMO_PASSWORD });
    expect(bare.status).toBe(400);
    expect(bare.body.error.fields.comment).toBe('Say why the variant is not released');
    for (const variantId of [...new Set(s.batches.map((b) => b.variant.id))]) {
      const res = await owner.post(`/api/studies/${s.id}/decisions`, { variantId, outcome: 'not_released', comment: 'Withdrawn before the first pull.', password: DEMO_PASSWORD });
      expect(res.status, JSON.stringify(res.body)).toBe(201);
    }
    const review = (await owner.get(`/api/studies/${s.id}/review`)).body.review;
    expect(review.decisions.map((d: { no: number }) => d.no).sort()).toEqual([1, 2]);
    const text = await pdfText(s.id);
    const schedule = text.slice(text.indexOf('Schedule'), text.indexOf('Attributes and acceptance criteria'));
    expect(schedule).toContain('Not pulled, study ended');
    expect(schedule).not.toMatch(/Overdue|Upcoming/);
    expect(schedule).toMatch(/Initial\s.*Done/);
  });
});
