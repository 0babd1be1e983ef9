/**
 * Out of specification (OOS) in headless Chromium on a tablet (1024 x 768, landscape): a technician
 * records a failing pH on the Record screen and is asked right there what to do; re-measures (both
 * readings show), then confirms with a comment (refused beside the field while empty), and only then
 * goes on to the next sample. A second failing result is put off and stays "Unconfirmed" on its card
 * (also seen at phone size). The formulator closes the investigation on the study page; Record and the
 * history say how it ended; the owner's review lists it. The study is made through the API; every value
 * is invented.
 * pH within ±0.5 of the initial value is common practice, no published source.
 */
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import type { Investigation } from '../../shared/schemas/oos';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import { DEMO, type Client } from '../helpers/app';
import { SHOTS, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, type Catalogue } from '../helpers/fixtures';

const TABLET = { width: 1024, height: 768 } as const;
const PHONE = { width: 390, height: 844 } as const;

let rig: BrowserRig;
let formulator: Client;
let technician: Client;
let cat: Catalogue;
let study: StudyDetail;

const attr = (code: string) => study.attributes.find((a) => a.code === code)!.id;
const week1 = (cond: number) => study.checkpoints.find((c) => c.label === 'Week 1' && c.studyConditionId === study.conditions[cond].id)!;
const ovenSamples = () => study.samples.filter((s) => s.studyConditionId === study.conditions[1].id).sort((a, b) => a.labelOrder - b.labelOrder);
const readings = (ph: number) => [
  { studyAttributeId: attr('ph'), value: ph, method: { method: 'neat' } },
  { studyAttributeId: attr('separation'), value: 0 },
  { studyAttributeId: attr('odor'), value: 'no_change' },
];

beforeAll(async () => {
  rig = await startBrowserRig();
  [formulator, technician] = await Promise.all([rig.t.signIn(DEMO.formulator), rig.t.signIn(DEMO.technician)]);
  cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Calendula hand cream');
  const today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  const created = await formulator.post('/api/studies', {
    productId: cat.productId,
    title: 'Calendula cream, out of specification',
    startDate: addDays(today, -7),
    batchIds: cat.batchIds,
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
      { conditionId: cat.conditions.oven45, role: 'accelerated', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
    ],
    attributes: [
      { attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } },
      { attributeId: cat.attributeIds.separation, criterion: { kind: 'worst_grade', grade: 1 } },
      { attributeId: cat.attributeIds.odor, criterion: { kind: 'worst_compared', level: 'slight' } },
    ],
    samplesPerCell: 1,
    containerDescription: '50 mL PET jar, PP lid',
    fillGrams: 45,
  });
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  study = started.body.study;
  // The initial test (pH 5.50 for every batch) and the fridge control at Week 1, through the API.
  const initial = study.checkpoints.find((c) => c.kind === 'initial')!;
  for (const s of study.samples.filter((x) => x.studyConditionId == null)) {
    const res = await technician.put(`/api/samples/${s.code}/checkpoints/${initial.id}/observations`, { entries: readings(5.5) });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
  }
  for (const s of study.samples.filter((x) => x.studyConditionId === study.conditions[0].id)) {
    const res = await technician.put(`/api/samples/${s.code}/checkpoints/${week1(0).id}/observations`, { entries: readings(5.45) });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
  }
});
afterAll(async () => rig?.close());

async function settle(page: Page) {
  await page.evaluate(() => document.fonts.ready);
  await page.waitForTimeout(350);
}

/** Visible buttons in the out-of-specification dialog below 48 px (touch targets). */
async function smallDialogTargets(page: Page): Promise<string[]> {
  return page.evaluate(() => {
    const out: string[] = [];
    for (const el of document.querySelectorAll<HTMLElement>('.oos-dialog button:not(.el-dialog__headerbtn)')) {
      const r = el.getBoundingClientRect();
      if (r.width > 0 && r.height > 0 && r.height < 48) out.push(`${el.textContent?.trim().slice(0, 40)} ${Math.round(r.height)}px`);
    }
    return out;
  });
}

const card = (page: Page, code: string) => page.getByTestId(`attr-${code}`);
const investigations = async () => (await formulator.get(`/api/studies/${study.id}/investigations`)).body.investigations as Investigation[];

describe('Out of specification at the bench', () => {
  it('asks right after a failing pH is saved: re-measure, then confirm with a comment; a result put off stays unconfirmed', async () => {
    const context = await rig.browser.newContext({ viewport: TABLET, hasTouch: true });
    const page = await context.newPage();
    const problems = watchPage(page);
    const [a, b] = ovenSamples();
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    await page.goto(`${rig.baseUrl}/samples/${a.code}/checkpoints/${week1(1).id}`);
    await expect.poll(() => page.getByTestId('record-sample-code').textContent()).toBe(a.code);

    // pH 4.80 against the initial 5.50: fails as typed.
    await page.getByTestId('value-ph').fill('4.80');
    await expect.poll(() => card(page, 'ph').getByTestId('verdict').getAttribute('data-verdict')).toBe('fail');
    await page.getByTestId('value-separation').locator('[data-value="0"]').click();
    await page.getByTestId('value-odor').locator('[data-value="no_change"]').click();
    await page.getByTestId('save-next').click();

    // Saved, and asked right there (the next sample waits).
    const dialog = page.getByTestId('oos-dialog');
    await dialog.waitFor();
    expect(page.url()).toContain(`/samples/${a.code}/`);
    const asked = (await dialog.textContent()) ?? '';
    expect(asked).toContain('pH is out of specification (OOS)');
    expect(asked).toContain('4.80');
    expect(asked).toContain('Re-measure');
    expect(asked).toContain('Confirm the result');
    const [inv] = await investigations();
    expect(inv).toMatchObject({ status: 'open', benchStep: 'unconfirmed', sampleCode: a.code, failed: { value: 4.8 } });
    expect(await smallDialogTargets(page)).toEqual([]);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-asked-tablet.png') });

    // Re-measure: a second reading, kept beside the first.
    await page.getByTestId('oos-choose-remeasure').click();
    await page.getByTestId('oos-remeasure-value').fill('4.85');
    await expect.poll(() => page.locator('#oos-remeasure-feedback [data-testid="verdict"]').getAttribute('data-verdict')).toBe('fail');
    expect(await page.locator('#oos-remeasure-feedback').textContent()).toContain('as typed');
    await page.getByTestId('oos-remeasure-comment').fill('Fresh buffer, electrode rinsed');
    await page.getByTestId('oos-remeasure-save').click();
    await page.getByTestId('oos-both').waitFor();
    expect(await page.getByTestId('oos-first').textContent()).toContain('First reading');
    expect(await page.getByTestId('oos-first').textContent()).toContain('4.80');
    expect(await page.getByTestId('oos-both').textContent()).toMatch(/Second reading\s*4\.85\s*Fail/);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-remeasured-tablet.png') });

    // Then confirm: a comment is required, and the message shows beside the field.
    await page.getByTestId('oos-go-confirm').click();
    await page.getByTestId('oos-confirm-save').click();
    await expect.poll(() => dialog.locator('.error').textContent()).toContain('Say what you checked before confirming');
    expect((await investigations())[0].benchStep).toBe('remeasured');
    await page.getByTestId('oos-confirm-comment').fill('Two readings agree; meter calibrated this morning');
    await page.getByTestId('oos-confirm-save').click();
    // Answered: on to the next sample, as "Save and next sample" asked.
    await page.waitForURL(new RegExp(`/samples/${b.code}/checkpoints/${week1(1).id}$`));
    const [done] = await investigations();
    expect(done).toMatchObject({ status: 'open', benchStep: 'confirmed', remeasure: { value: 4.85, verdict: 'fail' }, failed: { value: 4.8 } });
    expect(done.benchComment).toContain('Fresh buffer, electrode rinsed');
    expect(done.benchComment).toContain('Two readings agree');

    // The second sample fails too; "Decide later" leaves it unconfirmed, marked on its card with a word and an icon.
    await expect.poll(() => page.getByTestId('record-sample-code').textContent()).toBe(b.code);
    await page.getByTestId('value-ph').fill('4.70');
    await page.getByTestId('value-separation').locator('[data-value="0"]').click();
    await page.getByTestId('value-odor').locator('[data-value="no_change"]').click();
    await page.getByTestId('save').click();
    await dialog.waitFor();
    await page.getByTestId('oos-later').click();
    await expect.poll(() => dialog.isVisible()).toBe(false);
    expect(page.url()).toContain(`/samples/${b.code}/`);
    expect(await page.getByTestId('oos-unconfirmed-ph').textContent()).toContain('Unconfirmed');
    expect(await card(page, 'ph').getByTestId('oos-text').textContent()).toBe('Out of specification: investigation open');
    expect(await card(page, 'ph').locator('.record-icon').count()).toBeGreaterThan(0);
    expect(await page.getByTestId('record-unconfirmed').textContent()).toContain('1 out of specification, unconfirmed');
    expect((await investigations()).find((i) => i.sampleCode === b.code)?.benchStep).toBe('unconfirmed');
    await card(page, 'ph').scrollIntoViewIfNeeded();
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-unconfirmed-tablet.png') });

    // At phone size: the card, then the question opened from the card's own button.
    await page.setViewportSize(PHONE);
    await card(page, 'ph').scrollIntoViewIfNeeded();
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-unconfirmed-phone.png') });
    await page.getByTestId('oos-act-ph').click();
    await dialog.waitFor();
    expect(await dialog.textContent()).toContain('4.70');
    expect(await smallDialogTargets(page)).toEqual([]);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-asked-phone.png') });
    await page.getByTestId('oos-later').click();
    await expect.poll(() => dialog.isVisible()).toBe(false);
    await page.setViewportSize(TABLET);

    // Back on the first sample: both readings and the state on its card; the history has the second reading in words.
    await page.waitForLoadState('networkidle');
    await page.goto(`${rig.baseUrl}/samples/${a.code}/checkpoints/${week1(1).id}`);
    await card(page, 'ph').getByTestId('oos-text').waitFor();
    expect(await card(page, 'ph').getByTestId('oos-text').textContent()).toBe('Out of specification: re-measured 4.85, confirmed; investigation open');
    expect(await card(page, 'ph').getByTestId('oos-remeasure').textContent()).toMatch(/Second reading\s*4\.85\s*Fail/);
    expect(await page.getByTestId('oos-unconfirmed-ph').count()).toBe(0);
    await page.getByTestId('history-ph').click();
    await page.waitForSelector('[data-testid="history-table"]');
    await expect.poll(() => page.locator('[data-testid="history-row"]').count()).toBe(2);
    const second = page.locator('[data-testid="history-row"][data-change="remeasure"]');
    expect(await second.textContent()).toContain('Re-measured at the bench');
    expect(await second.textContent()).toContain('4.85');
    expect(await second.textContent()).toContain('Fresh buffer, electrode rinsed');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-history-tablet.png') });
    await page.keyboard.press('Escape');

    expect(problems).toEqual([]);
    await context.close();
  });

  it('the formulator closes the investigation on the study page; Record and the history say how it ended; the owner\'s review lists it', async () => {
    const [a, b] = ovenSamples();
    const all = await investigations();
    const invA = all.find((i) => i.sampleCode === a.code)!;
    const invB = all.find((i) => i.sampleCode === b.code)!;

    // The formulator opens the study's investigations (where the notification links) and closes A's: invalidated, with a valid re-test.
    const context = await rig.browser.newContext({ viewport: TABLET, hasTouch: true });
    const page = await context.newPage();
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${study.id}?tab=investigations`);
    const cardA = page.getByTestId(`investigation-${invA.id}`);
    await cardA.waitFor();
    expect(await cardA.getAttribute('data-status')).toBe('open');
    expect(await cardA.getAttribute('data-step')).toBe('confirmed');
    expect(await page.getByTestId(`investigation-${invB.id}`).getByTestId('investigation-unconfirmed').textContent()).toContain('Unconfirmed');
    const f = (key: string) => page.getByTestId(`close-${invA.id}-${key}`);
    await f('instrument').fill('Meter calibrated at 4, 7 and 10');
    await f('method').fill('Neat reading, as at the initial test');
    await f('sample').fill('Right jar, well mixed');
    await f('calculation').fill('None: a direct reading');
    await f('invalidated').click();
    await f('reason').fill('The pH 7 buffer was out of date; recalibrated with fresh buffer');
    await f('retest').fill('5.45');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'oos-close-tablet.png') });
    await f('submit').click();
    await expect.poll(() => cardA.getAttribute('data-status')).toBe('closed');
    expect((await investigations()).find((i) => i.id === invA.id)).toMatchObject({ conclusion: 'invalidated', valueUsed: 5.45, closed: { by: 'Theo Okafor' } });
    expect(problems).toEqual([]);
    await context.close();
    // B's is confirmed as a real result (through the API; the form is the same).
    const checks = { instrument: 'Meter calibrated at 4, 7 and 10', method: 'Neat reading', sample: 'Right jar, well mixed', calculation: 'None: a direct reading' };
    const closedB = await formulator.post(`/api/investigations/${invB.id}/close`, { checks, conclusion: 'confirmed', reason: 'A real drop in pH at 45 °C' });
    expect(closedB.status, JSON.stringify(closedB.body)).toBe(200);

    // Back at the bench: Record says how each ended; the history keeps the original, struck through.
    const tech = await rig.browser.newContext({ viewport: TABLET, hasTouch: true });
    const tpage = await tech.newPage();
    const techProblems = watchPage(tpage);
    await signInSettled(tpage, rig.baseUrl, DEMO.technician);
    await tpage.goto(`${rig.baseUrl}/samples/${a.code}/checkpoints/${week1(1).id}`);
    await card(tpage, 'ph').getByTestId('oos-text').waitFor();
    expect(await card(tpage, 'ph').getByTestId('oos-text').textContent()).toBe('Out of specification: re-measured 4.85, confirmed; closed: invalidated, re-test 5.45 used');
    expect(await card(tpage, 'ph').getByTestId('recorded-value').textContent()).toContain('5.45');
    expect(await tpage.getByTestId('oos-act-ph').count()).toBe(0);
    await tpage.getByTestId('history-ph').click();
    await tpage.waitForSelector('[data-testid="history-table"]');
    const invalidated = tpage.locator('[data-testid="history-row"][data-change="invalidated"]');
    await invalidated.waitFor();
    expect(await invalidated.textContent()).toContain('Invalidated as a lab error');
    expect(await invalidated.textContent()).toContain('4.80');
    expect(await invalidated.locator('.value').evaluate((el) => getComputedStyle(el).textDecorationLine)).toBe('line-through');
    await settle(tpage);
    await tpage.screenshot({ path: join(SHOTS, 'oos-closed-history-tablet.png') });
    await tpage.keyboard.press('Escape');
    await tpage.waitForLoadState('networkidle');
    await tpage.goto(`${rig.baseUrl}/samples/${b.code}/checkpoints/${week1(1).id}`);
    await card(tpage, 'ph').getByTestId('oos-text').waitFor();
    expect(await card(tpage, 'ph').getByTestId('oos-text').textContent()).toBe('Out of specification: closed: result confirmed');
    expect(techProblems).toEqual([]);
    await tech.close();

    // Submitted for review now that none is open; the owner's review lists both with their conclusions.
    const submitted = await formulator.post(`/api/studies/${study.id}/submit`, {
      summary: 'Early look at the 45 °C oven.',
      proposals: cat.variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 6 })),
      openCheckpointsReason: 'Ending early for the test',
    });
    expect(submitted.status, JSON.stringify(submitted.body)).toBe(200);
    const own = await rig.browser.newContext({ viewport: TABLET });
    const opage = await own.newPage();
    const ownerProblems = watchPage(opage);
    await signInSettled(opage, rig.baseUrl, DEMO.owner);
    await opage.goto(`${rig.baseUrl}/reviews/${study.id}`);
    const rowA = opage.getByTestId('review-investigations').getByTestId(`investigation-row-${invA.id}`);
    await rowA.waitFor();
    expect(await rowA.getByTestId('investigation-row-conclusion').textContent()).toMatch(/invalidated/i);
    expect(await rowA.textContent()).toContain(a.code);
    expect(await opage.getByTestId('review-investigations').getByTestId(`investigation-row-${invB.id}`).getByTestId('investigation-row-conclusion').textContent()).toMatch(/confirmed/i);
    await opage.getByTestId('review-investigations').scrollIntoViewIfNeeded();
    await settle(opage);
    await opage.screenshot({ path: join(SHOTS, 'oos-review-tablet.png') });
    expect(ownerProblems).toEqual([]);
    await own.close();
  });
});
