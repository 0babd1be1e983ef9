import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eq, and } from 'drizzle-orm';
import { auditLog, labs, users } from '../../server/db/schema';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { createTestApp, DEMO, DEMO_PASSWORD, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor, type Catalogue } from '../helpers/fixtures';
import { unlock, wrongPasswords } from '../helpers/lockout';
import { LOCKOUT } from '../../server/auth/lockout';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let cat: Catalogue;

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
  cat = await makeCatalogue(t.db, t.labs[0].id);
});
afterAll(async () => t?.close());

/** A running study with its initial test recorded for every batch; the pulls still open. */
async function runningStudy() {
  const plan = planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -3));
  const id = (await formulator.post('/api/studies', plan)).body.study.id;
  const study = (await formulator.post(`/api/studies/${id}/start`)).body.study;
  for (const cp of study.checkpoints.filter((c: { kind: string }) => c.kind === 'initial')) {
    for (const s of study.samples.filter((x: { studyConditionId: number | null }) => x.studyConditionId == null)) {
      await technician.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, {
        entries: study.attributes.map((a: { id: number; code: string }) => ({
          studyAttributeId: a.id,
          value: a.code === 'ph' ? 5.5 : a.code === 'separation' ? 0 : 'no_change',
        })),
      });
    }
  }
  const variantIds = [...new Set(study.batches.map((b: { variant: { id: number } }) => b.variant.id))] as number[];
  return { id, study, variantIds };
}

const proposals = (ids: number[]) => ids.map((variantId) => ({ variantId, shelfLifeMonths: 12, paoMonths: 6 }));
const sign = (c: Client, studyId: number, body: object) => c.post(`/api/studies/${studyId}/decisions`, { password: DEMO_PASSWORD, ...body });

describe('submitting for review', () => {
  it('needs a reason while checkpoints are open, and locks the observations once in review', async () => {
    const { id, variantIds } = await runningStudy();
    const noReason = await formulator.post(`/api/studies/${id}/submit`, { summary: 'Both variants held for the first days.', proposals: proposals(variantIds) });
    expect(noReason.status).toBe(422);
    const open = (await formulator.get(`/api/studies/${id}`)).body.study.checkpoints.filter((c: { status: string }) => c.status === 'open').length;
    expect(noReason.body.error.fields.openCheckpointsReason).toBe(`${open} checkpoints are still open: give a reason to end early`);
    const missingVariant = await formulator.post(`/api/studies/${id}/submit`, { summary: 'Both variants held.', proposals: proposals(variantIds.slice(0, 1)), openCheckpointsReason: 'Ending early' });
    expect(missingVariant.status).toBe(400);
    expect((await technician.post(`/api/studies/${id}/submit`, { summary: 'x'.repeat(20), proposals: proposals(variantIds) })).status).toBe(403);
    const ok = await formulator.post(`/api/studies/${id}/submit`, {
      summary: 'Both variants held for the first days.',
      proposals: proposals(variantIds),
      openCheckpointsReason: 'Formula change decided; ending early',
    });
    expect(ok.status).toBe(200);
    expect(ok.body.review.submission.openCheckpointsReason).toBe('Formula change decided; ending early');
    const queue = await owner.get('/api/reviews');
    expect(queue.body.queue.map((q: { studyId: number }) => q.studyId)).toContain(id);
    expect((await formulator.get('/api/reviews')).status).toBe(403);
    expect((await otherOwner.get('/api/reviews')).body.queue).toEqual([]);
  });
});

describe('signing decisions', () => {
  it('only owners sign: a technician and a formulator get 403 and nothing is written', async () => {
    const { id, variantIds } = await runningStudy();
    await formulator.post(`/api/studies/${id}/submit`, { summary: 'Ready for a decision.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    const body = { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12 };
    expect((await sign(technician, id, body)).status).toBe(403);
    expect((await sign(formulator, id, body)).status).toBe(403);
    expect((await owner.get(`/api/studies/${id}/review`)).body.review.decisions).toEqual([]);
  });

  it('a wrong password is refused, logged, and limited', async () => {
    const { id, variantIds } = await runningStudy();
    await formulator.post(`/api/studies/${id}/submit`, { summary: 'Ready for a decision.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    const wrong = await sign(otherOwner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12, password: 'nope' });
    expect(wrong.status).toBe(404); // another lab: not found, before any password check
    const res = await owner.post(`/api/studies/${id}/decisions`, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12, password: 'not-my-password' });
    expect(res.status).toBe(403);
    expect(res.body.error.fields).toHaveProperty('password');
    const logged = await t.db.select().from(auditLog).where(and(eq(auditLog.action, 'sign_failed'), eq(auditLog.entityId, String(id))));
    expect(logged).toHaveLength(1);
    // 40 wrong passwords at the same moment: the 4 left before the limit are checked, the rest refused; then the right one is refused too.
    const burst = await Promise.all(
      Array.from({ length: 40 }, (_, i) =>
        owner.post(`/api/studies/${id}/decisions`, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12, password: `still-wrong-${i}` }),
      ),
    );
    expect(burst.filter((r) => r.status === 403)).toHaveLength(LOCKOUT.maxFailures - 1);
    expect(burst.filter((r) => r.status === 429)).toHaveLength(40 - (LOCKOUT.maxFailures - 1));
    const locked = await sign(owner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12 });
    expect(locked.status).toBe(429);
    expect(Number(locked.headers['retry-after'])).toBeGreaterThan(0);
    await unlock(t.db, DEMO.owner);
  });

  it('refuses a shelf life of zero, negative or over 120 months, and superseding without a reason', async () => {
    const { id, variantIds } = await runningStudy();
    await formulator.post(`/api/studies/${id}/submit`, { summary: 'Ready for a decision.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    for (const months of [0, -3, 121, 2.5]) {
      const res = await sign(owner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: months });
      expect(res.status).toBe(400);
      expect(res.body.error.fields).toHaveProperty('shelfLifeMonths');
    }
    const noReason = await sign(owner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12, supersedesId: 1 });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.fields).toHaveProperty('supersedeReason');
  });

  it('signs per variant: release with label dating, return the other for more testing; two signatures at once make one', async () => {
    const { id, study, variantIds } = await runningStudy();
    await formulator.post(`/api/studies/${id}/submit`, { summary: 'A looks good; B unsure.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    const body = { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 24, paoMonths: 12, comment: 'Good at every condition so far.' };
    const [a, b] = await Promise.all([sign(owner, id, body), sign(owner, id, body)]);
    expect([a.status, b.status].sort()).toEqual([201, 409]);
    const review = (a.status === 201 ? a : b).body.review;
    const d = review.decisions[0];
    expect(d).toMatchObject({ outcome: 'released', shelfLifeMonths: 24, signerName: 'Maya Lindqvist', meaning: 'approved for release', labelRule: 'best_before', coversCurrentData: true });
    expect(d.dataHash).toMatch(/^[0-9a-f]{64}$/);
    // EU Regulation 1223/2009 Art. 19(1)(c): 30 months or less needs a best-before date.
    expect(d.labelText).toMatch(/19\(1\)\(c\)/);

    const cont = await sign(owner, id, {
      variantId: variantIds[1],
      outcome: 'continue_testing',
      comment: 'Needs week 8 at 45 °C',
      newCheckpoints: [{ studyConditionId: study.conditions[1].id, offset: { unit: 'week', n: 8 } }],
    });
    expect(cont.status).toBe(201);
    const detail = (await formulator.get(`/api/studies/${id}`)).body.study;
    expect(detail.status).toBe('running'); // reopened for the new checkpoint
    expect(detail.checkpoints.some((c: { label: string }) => c.label === 'Week 8')).toBe(true);
    expect((await owner.get('/api/reviews')).body.queue.map((q: { studyId: number }) => q.studyId)).not.toContain(id);
    const signed = await t.db.select().from(auditLog).where(and(eq(auditLog.action, 'sign'), eq(auditLog.studyId, id)));
    expect(signed).toHaveLength(2);
  });

  it('a decided study: supersede with a reason; a later data change marks the signature as not covering current data', async () => {
    const { id, study, variantIds } = await runningStudy();
    await formulator.post(`/api/studies/${id}/submit`, { summary: 'All good at every condition.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    for (const v of variantIds) { const r = await sign(owner, id, { variantId: v, outcome: "released", shelfLifeMonths: 36, paoMonths: 12 }); expect(r.status, JSON.stringify(r.body)).toBe(201); }
    const decided = (await owner.get(`/api/studies/${id}/review`)).body.review;
    expect((await formulator.get(`/api/studies/${id}`)).body.study.status).toBe('decided');
    expect(decided.current[0].labelRule).toBe('period_after_opening'); // above 30 months

    const again = await sign(owner, id, { variantId: variantIds[0], outcome: 'not_released', comment: 'Second thoughts' });
    expect(again.status).toBe(409);
    const sup = await sign(owner, id, {
      variantId: variantIds[0],
      outcome: 'released_with_conditions',
      conditionsText: 'Protect from freezing.',
      shelfLifeMonths: 24,
      supersedesId: decided.current.find((d: { variantId: number }) => d.variantId === variantIds[0]).id,
      supersedeReason: 'Freeze-thaw result came in after signing',
    });
    expect(sup.status, JSON.stringify(sup.body)).toBe(201);
    const old = sup.body.review.decisions.find((d: { id: number }) => d.id === decided.current[0].id);
    expect(old.supersededById).toBe(sup.body.decisionId);

    // The owner corrects an observation after the decision: the signature no longer covers the data.
    const sheet = (await owner.get(`/api/samples/${study.samples[0].code}/checkpoints/${study.checkpoints[0].id}`)).body.sheet;
    const obsId = sheet.attributes[0].current.id;
    expect((await owner.post(`/api/observations/${obsId}/corrections`, { value: 5.45, reason: 'Transcription error found' })).status).toBe(200);
    const stale = (await owner.get(`/api/studies/${id}/review`)).body.review;
    expect(stale.current.every((d: { coversCurrentData: boolean }) => !d.coversCurrentData)).toBe(true);
    expect((await formulator.get(`/api/studies/${id}`)).body.study.status).toBe('in_review');
  });

  it('a shelf life longer than the analysis suggests needs a comment saying why (400 naming comment, no password attempt used)', async () => {
    // Day 0, week 1 and week 4 recorded, all passing: the 45 °C oven gives a Q10 projection.
    const plan = planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -30));
    const id = (await formulator.post('/api/studies', plan)).body.study.id;
    const study = (await formulator.post(`/api/studies/${id}/start`)).body.study;
    for (const cp of study.checkpoints) {
      for (const s of study.samples.filter((x: { studyConditionId: number }) => x.studyConditionId === cp.studyConditionId)) {
        const res = await technician.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, {
          entries: study.attributes.map((a: { id: number; code: string }) => ({ studyAttributeId: a.id, value: a.code === 'ph' ? 5.5 : a.code === 'separation' ? 0 : 'no_change' })),
        });
        expect(res.status, JSON.stringify(res.body)).toBe(200);
      }
    }
    const variantIds = [...new Set(study.batches.map((b: { variant: { id: number } }) => b.variant.id))] as number[];
    expect((await formulator.post(`/api/studies/${id}/submit`, { summary: 'Four weeks at 45 °C, all passing.', proposals: proposals(variantIds) })).status).toBe(200);
    const analysis = (await owner.get(`/api/studies/${id}/analysis`)).body.analysis;
    const suggested = analysis.suggestions.find((x: { variantId: number }) => x.variantId === variantIds[0]).result.months as number;
    expect(suggested).toBeGreaterThanOrEqual(1);

    const longer = await sign(owner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: suggested + 1, password: 'a wrong one, not checked' });
    expect(longer.status).toBe(400);
    expect(longer.body.error.fields.comment).toBe(`Longer than the data suggest (${suggested} ${suggested === 1 ? 'month' : 'months'}): say why in the comment`);
    expect((await wrongPasswords(t.db, DEMO.owner)).failures).toBe(0);
    const blank = await sign(owner, id, { variantId: variantIds[0], outcome: 'released_with_conditions', conditionsText: 'Store below 25 °C.', shelfLifeMonths: suggested + 6, comment: '   ' });
    expect(blank.body.error.fields).toHaveProperty('comment');

    // As suggested, or shorter: no comment needed. Longer with a reason: signed.
    expect((await sign(owner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: suggested })).status).toBe(201);
    const withWhy = await sign(owner, id, { variantId: variantIds[1], outcome: 'released', shelfLifeMonths: suggested + 6, comment: 'The earlier lots of this formula held 24 months at 25 °C.' });
    expect(withWhy.status, JSON.stringify(withWhy.body)).toBe(201);
  });

  it('a lab can bar an owner from approving a study they wrote', async () => {
    const { id, variantIds } = await runningStudy();
    await owner.post(`/api/studies/${id}/submit`, { summary: 'Submitted by the owner.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    await t.db.update(labs).set({ barSelfApproval: true }).where(eq(labs.id, t.labs[0].id));
    const res = await sign(owner, id, { variantId: variantIds[0], outcome: 'released', shelfLifeMonths: 12 });
    expect(res.status).toBe(403);
    expect(res.body.error.message).toMatch(/author/);
    await t.db.update(labs).set({ barSelfApproval: false }).where(eq(labs.id, t.labs[0].id));
  });
});

describe('the Reviews page', () => {
  it('lists decided studies, latest decision first, with the outcome per variant; owners of this lab only', async () => {
    const { id, variantIds } = await runningStudy();
    await formulator.post(`/api/studies/${id}/submit`, { summary: 'Ready for a decision.', proposals: proposals(variantIds), openCheckpointsReason: 'Ending early' });
    expect((await sign(owner, id, { variantId: variantIds[0], outcome: 'released_with_conditions', conditionsText: 'Protect from freezing.', shelfLifeMonths: 12, paoMonths: 6 })).status).toBe(201);
    // Half decided: still in the queue, not yet among the decided.
    let page = (await owner.get('/api/reviews')).body;
    expect(page.queue.map((q: { studyId: number }) => q.studyId)).toContain(id);
    expect(page.decided.map((d: { studyId: number }) => d.studyId)).not.toContain(id);
    expect((await sign(owner, id, { variantId: variantIds[1], outcome: 'not_released', comment: 'Separates' })).status).toBe(201);

    page = (await owner.get('/api/reviews')).body;
    expect(page.queue.map((q: { studyId: number }) => q.studyId)).not.toContain(id);
    const [first] = page.decided;
    expect(first).toMatchObject({ studyId: id, title: 'Test study', decidedBy: 'Maya Lindqvist' });
    expect(first.variants.map((v: { code: string; outcome: string; shelfLifeMonths: number | null; conditionsText: string | null }) => [v.code, v.outcome, v.shelfLifeMonths, v.conditionsText])).toEqual([
      ['A', 'released_with_conditions', 12, 'Protect from freezing.'],
      ['B', 'not_released', null, null],
    ]);
    const times = page.decided.map((d: { decidedAt: string }) => d.decidedAt);
    expect(times).toEqual([...times].sort().reverse());

    // Superseding moves the study's time and shows the decision now in force.
    const current = (await owner.get(`/api/studies/${id}/review`)).body.review.current;
    const sup = await sign(owner, id, {
      variantId: variantIds[1],
      outcome: 'released',
      shelfLifeMonths: 6,
      supersedesId: current.find((d: { variantId: number }) => d.variantId === variantIds[1]).id,
      supersedeReason: 'Re-tested: the separation was a filling fault',
      comment: 'Filling fault, not the formula',
    });
    expect(sup.status, JSON.stringify(sup.body)).toBe(201);
    const again = (await owner.get('/api/reviews')).body.decided.find((d: { studyId: number }) => d.studyId === id);
    expect(again.variants.map((v: { outcome: string }) => v.outcome)).toEqual(['released_with_conditions', 'released']);

    expect((await formulator.get('/api/reviews')).status).toBe(403);
    expect((await technician.get('/api/reviews')).status).toBe(403);
    expect((await otherOwner.get('/api/reviews')).body).toEqual({ queue: [], decided: [] }); // another lab sees none of it
  });
});

describe('observations export', () => {
  it('exports every observation in long format', async () => {
    const { id } = await runningStudy();
    const res = await technician.get(`/api/studies/${id}/observations.csv`);
    expect(res.status).toBe(200);
    const lines = res.text.trim().split('\r\n');
    expect(lines[0]).toMatch(/^sample,variant,lot,condition,checkpoint,due_date,attribute,unit,value,verdict/);
    expect(lines).toHaveLength(1 + 2 * 3); // 2 retained samples (one per batch) x 3 attributes at the initial test
    expect(lines[1]).toMatch(/^[A-Z0-9]{6},A,T\d+-A,Initial test,Initial,/);
    expect((await otherOwner.get(`/api/studies/${id}/observations.csv`)).status).toBe(404);
  });

  it('writes numbers as numbers (-1.5 stays -1.5) and guards only text cells against formulas', async () => {
    // Guard per OWASP "CSV Injection": text starting with =, +, -, @, tab or CR gets a leading apostrophe.
    const plan = {
      ...planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -7)),
      attributes: [
        { attributeId: cat.attributeIds.color_a, criterion: { kind: 'none' as const } },
        { attributeId: cat.attributeIds.note, criterion: { kind: 'none' as const } },
      ],
    };
    const id = (await formulator.post('/api/studies', plan)).body.study.id;
    const study = (await formulator.post(`/api/studies/${id}/start`)).body.study;
    const cp = study.checkpoints.find((c: { label: string; studyConditionId: number | null }) => c.label === 'Week 1' && c.studyConditionId === study.conditions[0].id);
    const sample = study.samples.find((x: { studyConditionId: number | null }) => x.studyConditionId === cp.studyConditionId);
    const attr = (code: string) => study.attributes.find((a: { code: string }) => a.code === code).id;
    const put = await technician.put(`/api/samples/${sample.code}/checkpoints/${cp.id}/observations`, {
      entries: [
        { studyAttributeId: attr('color_a'), value: -1.5 },
        { studyAttributeId: attr('note'), value: '=SUM(A1)' },
      ],
    });
    expect(put.status, JSON.stringify(put.body)).toBe(200);
    const lines = (await technician.get(`/api/studies/${id}/observations.csv`)).text.trim().split('\r\n');
    const valueIndex = lines[0].split(',').indexOf('value');
    const valueOf = (code: string) => lines.find((l) => l.split(',')[6] === code)!.split(',')[valueIndex];
    expect(valueOf('color_a')).toBe('-1.5');
    expect(valueOf('note')).toBe("'=SUM(A1)");
  });
});
