/**
 * Release review in headless Chromium: a running study with results, chamber logs and
 * photos is built through the API (the initial test on the retained samples, then the pulls);
 * B's separation at 45 °C week 8 fails its criterion and opens an out-of-specification
 * investigation. The formulator is told by an in-app notice, opens the study page's "Submit for
 * review" tab, fills the proposals, the summary and the reason for the open checkpoints (each
 * refused beside its field while missing); submitting is refused while the investigation is
 * open, so they close it on the Investigations tab (empty fields and a re-test outside the scale
 * refused beside their fields) and submit, and the page shows the study in review. The owner opens Reviews, opens the study, signs a release for variant A
 * (after one wrong password) and returns variant B for more testing with an added checkpoint.
 * The queue no longer lists the study and the review page shows both outcomes and the
 * investigation with its conclusion. Then the PDF
 * (first two pages rendered with pdftoppm) and the print-friendly web report. Invented data:
 * A holds; B separates at 45 °C by week 8.
 */
import { execFileSync } from 'node:child_process';
import { copyFileSync, mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { seedFormulas } from '../../server/demo/formulas';
import { addDays } from '../../shared/compute/schedule';
import type { Investigation } from '../../shared/schemas/oos';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import { DEMO, DEMO_PASSWORD, type Client } from '../helpers/app';
import { SHOTS, VIEWPORTS, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, planFor, uploadHourlyLogs } from '../helpers/fixtures';

let rig: BrowserRig;
let formulator: Client, technician: Client, owner: Client;
let study: StudyDetail;
let today: string;

const W = (n: number) => ({ unit: 'week' as const, n });
const C = (n: number) => ({ unit: 'cycle' as const, n });
const TABLET_1024 = { width: 1024, height: 768 } as const;
const PHONE = { width: 390, height: 844 } as const;

/** A jar seen from above: cream colour, and for a separated sample an oily band on top (invented image). */
async function jarPhoto(tint: number, separated: boolean): Promise<Buffer> {
  const w = 320;
  const h = 240;
  const px = Buffer.alloc(w * h * 3);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const inJar = (x - 160) ** 2 + (y - 120) ** 2 < 100 ** 2;
      const band = separated && y < 95;
      const [r, g, b] = !inJar ? [214, 214, 210] : band ? [222, 196, 120 - tint] : [246, 240 - tint, 222 - tint * 2];
      const i = (y * w + x) * 3;
      px[i] = r;
      px[i + 1] = g;
      px[i + 2] = b;
    }
  }
  return sharp(px, { raw: { width: w, height: h, channels: 3 } }).jpeg({ quality: 85 }).toBuffer();
}

beforeAll(async () => {
  rig = await startBrowserRig();
  [formulator, technician, owner] = await Promise.all([rig.t.signIn(DEMO.formulator), rig.t.signIn(DEMO.technician), rig.t.signIn(DEMO.owner)]);
  const lab = rig.t.labs[0];
  // Real formulas and lots (with their formula snapshots) from the demo catalogue; conditions and attributes from the fixtures.
  const demo = await rig.t.db.transaction((tx) => seedFormulas(tx, lab.id, lab.members[DEMO.formulator]));
  const cat = await makeCatalogue(rig.t.db, lab.id);
  today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  const start = addDays(today, -56);
  const weekly = [W(1), W(2), W(4), W(8), W(12)];
  const a = cat.attributeIds;
  const created = await formulator.post('/api/studies', {
    productId: demo.products.handCream,
    title: 'Calendula hand cream A vs B: release study',
    startDate: start,
    batchIds: demo.batches.slice(0, 2),
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', template: null, offsets: weekly },
      { conditionId: cat.conditions.room, role: 'real_time', template: null, offsets: weekly },
      { conditionId: cat.conditions.oven45, role: 'accelerated', template: 'accelerated-12w', offsets: weekly },
      { conditionId: cat.conditions.freezeThaw, role: 'stress', template: null, offsets: [C(1), C(2), C(3)] },
    ],
    attributes: [
      { attributeId: a.ph, criterion: { kind: 'change_abs', max: 0.5 } },
      { attributeId: a.viscosity, criterion: { kind: 'change_pct', max: 20 } },
      { attributeId: a.separation, criterion: { kind: 'worst_grade', grade: 1 } },
      { attributeId: a.odor, criterion: { kind: 'worst_compared', level: 'slight' } },
    ],
    samplesPerCell: 1,
    containerDescription: '50 mL PET jar, PP lid',
    fillGrams: 45,
  });
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  study = started.body.study;

  const roleOf = new Map(study.conditions.map((c) => [c.id, c.role]));
  const ids = Object.fromEntries(study.attributes.map((x) => [x.code, x.id]));
  const variantB = demo.variants.handCreamB;
  const isB = (batchId: number) => study.batches.find((b) => b.id === batchId)?.variant.id === variantB;
  // The initial test (retained samples, no condition), the pulls and the control readings paired with them, as far as today.
  for (const cp of study.checkpoints.filter((c) => c.dueDate <= today)) {
    const role = cp.studyConditionId == null ? undefined : roleOf.get(cp.studyConditionId);
    const hot = role === 'accelerated';
    const room = role === 'real_time';
    const w = cp.offset.unit === 'week' ? cp.offset.n : 0;
    for (const s of study.samples.filter((x) => x.studyConditionId === cp.studyConditionId)) {
      const b = isB(s.batchId);
      const phRate = hot ? (b ? 0.035 : 0.012) : room ? 0.004 : 0.001;
      const ph = Math.round((5.5 + (b ? 0.03 : 0) - phRate * w + ((w % 3) - 1) * 0.01) * 100) / 100;
      const viscRate = hot ? (b ? 0.02 : 0.008) : room ? 0.003 : 0;
      const viscosity = Math.round((b ? 14000 : 12000) * (1 - viscRate * w));
      const separation = b && hot ? (w >= 8 ? 2 : w >= 4 ? 1 : 0) : 0;
      const odor = hot && b && w >= 8 ? 'slight' : 'no_change';
      const res = await technician.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, {
        entries: [
          { studyAttributeId: ids.ph, value: ph },
          { studyAttributeId: ids.viscosity, value: viscosity },
          { studyAttributeId: ids.separation, value: separation },
          { studyAttributeId: ids.odor, value: odor },
        ],
      });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
      // Photos of the retained samples at the initial test, and of the 45 °C samples at week 4 and week 8.
      if (cp.kind === 'initial' || (hot && [4, 8].includes(w))) {
        const up = await technician.agent
          .post(`/api/samples/${s.code}/checkpoints/${cp.id}/photos`)
          .set('X-Keepwell-Request', '1')
          .attach('photos', await jarPhoto(w * 2, b && w >= 8), `${s.code}-w${w}.jpg`);
        expect(up.status, JSON.stringify(up.body)).toBe(201);
      }
    }
  }
  await uploadHourlyLogs(formulator, [
    [cat.conditions.oven45, 45],
    [cat.conditions.room, 25],
  ], start, 56 * 24);
}, 240_000);
afterAll(async () => rig?.close());

/** An element screenshot with the app bar unpinned, so a tall element is not crossed by it. */
async function shot(page: Page, el: ReturnType<Page['locator']>, file: string) {
  await page.addStyleTag({ content: 'header.bar { position: static !important; }' });
  await el.scrollIntoViewIfNeeded();
  await page.waitForTimeout(300);
  await el.screenshot({ path: join(SHOTS, file) });
}

async function noBadText(page: Page) {
  const text = await page.locator('main').innerText();
  expect(text).not.toMatch(/\bNaN\b|\bundefined\b|\bnull\b|Infinity|\[object/);
}

describe('Submit for review', () => {
  it('the formulator is told of the out-of-specification result, closes its investigation, then submits; the page shows the study in review', async () => {
    const investigations = (await formulator.get(`/api/studies/${study.id}/investigations`)).body.investigations as Investigation[];
    // One failing result: B's separation grade 2 at 45 °C week 8 against "at worst grade 1".
    expect(investigations.map((i) => [i.variant, i.checkpoint.label, i.attribute.name, i.failed.value, i.status])).toEqual([['B', 'Week 8', 'Separation', 2, 'open']]);
    const inv = investigations[0];

    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);

    // The in-app notice: the bell says "1 new" in words; at phone size too, the list opens under it.
    const bell = page.getByTestId('notifications-button');
    await expect.poll(() => bell.textContent()).toMatch(/Notices\s*1\s*new/);
    expect(await page.getByRole('button', { name: /^Notices\s*1\s*new$/ }).count()).toBe(1); // its name is its text
    await page.setViewportSize(PHONE);
    await bell.click();
    const notice = page.getByTestId('notifications').locator('[data-testid^="notification-"]');
    await expect.poll(() => notice.count()).toBe(1);
    expect(await notice.textContent()).toContain(`Out of specification in ${study.title}`);
    expect(await notice.textContent()).toContain('New');
    expect((await bell.boundingBox())!.x + (await bell.boundingBox())!.width).toBeLessThanOrEqual(PHONE.width);
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(SHOTS, 'notifications-phone.png') });
    await page.setViewportSize(VIEWPORTS.desktop);
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(SHOTS, 'notifications-desktop.png') });
    // Choosing it marks it read and opens the study's investigations.
    await notice.click();
    await page.waitForURL(new RegExp(`/studies/${study.id}\\?tab=investigations$`));
    await page.getByTestId('investigations').waitFor();
    await expect.poll(() => bell.textContent()).not.toContain('new');
    expect((await formulator.get('/api/notifications')).body.unread).toBe(0);
    expect(await page.getByTestId('investigations-open').textContent()).toMatch(/1\s*open/);

    // Studies, then the study, then its "Submit for review" tab.
    await page.getByTestId('nav-studies').click();
    await page.getByTestId('studies-table').getByRole('link', { name: study.title }).click();
    await page.waitForURL(new RegExp(`/studies/${study.id}(\\?.*)?$`));
    await expect.poll(() => page.getByTestId('study-status').getAttribute('data-status')).toBe('running');
    await page.getByRole('tab', { name: 'Submit for review' }).click();
    await page.waitForURL(/[?&]tab=submit\b/);
    const form = page.getByTestId('submit-form');
    await form.getByTestId('submit-summary').waitFor();
    // One row per variant, each with the analysis's suggestion; week 12 is still open, so a reason is asked for.
    expect(await form.getByTestId('proposal-A').textContent()).toMatch(/Suggested|No suggested figure/);
    expect(await form.getByTestId('proposal-B').count()).toBe(1);
    expect(await form.getByTestId('submit-open-reason').count()).toBe(1);

    // A: 6 months, 6 months after opening. B: no shelf life proposed (it goes on testing).
    await form.getByTestId('proposal-A-shelf-life').locator('input').fill('6');
    await form.getByTestId('proposal-A-pao').locator('input').fill('6');
    await form.getByTestId('proposal-B-shelf-life').locator('input').fill('');
    await form.getByTestId('proposal-B-pao').locator('input').fill('');
    await form.getByTestId('proposal-B-pao').locator('input').blur();
    expect(await form.getByTestId('proposal-B-shelf-life').locator('input').inputValue()).toBe('');

    // Without a summary, then without the reason for the open checkpoints: each refused beside its field, nothing sent.
    await form.getByTestId('submit-for-review').click();
    await expect.poll(() => form.locator('.el-form-item__error').allTextContents()).toContain('Write a short summary for the reviewer (at least 10 characters)');
    await form
      .getByTestId('submit-summary')
      .fill(
        'A held at every condition through week 8: pH and viscosity well inside the limits, no separation. B separated at 45 °C by week 8 (grade 2) with a slight odour change; its 25 °C results are fine. I propose releasing A with a provisional 6 months (the 45 °C projection gives about 7) and testing B further.',
      );
    await form.getByTestId('submit-for-review').click();
    await expect.poll(() => form.locator('.el-form-item__error').allTextContents()).toEqual([expect.stringMatching(/^\d+ checkpoints are still open: give a reason to end early$/)]);
    // Typing the reason clears its error at once, before the next submit.
    await form.getByTestId('submit-open-reason').fill('Week 12 is not needed for A; B goes on in any case');
    await expect.poll(() => form.locator('.el-form-item__error').count()).toBe(0);
    // The open investigation is named above the form, with the way to it.
    expect(await form.getByTestId('submit-oos-block').textContent()).toContain('1 out-of-specification investigation is still open: close it before submitting');
    await page.evaluate(() => window.scrollTo(0, 0)); // the pinned app bar stays at the top of a full-page shot
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(SHOTS, 'study-submit-tab.png'), fullPage: true });
    expect((await formulator.get(`/api/studies/${study.id}`)).body.study.status).toBe('running');

    // Submitting anyway: the server refuses (409, fields.investigations) and its message shows above the form.
    await form.getByTestId('submit-for-review').click();
    await expect.poll(() => form.getByTestId('submit-oos-block').textContent()).toMatch(/1 out-of-specification investigation is still open \(.+\): close it before submitting/);
    expect(await form.getByTestId('submit-oos-block').textContent()).toContain(`${inv.sampleCode}`);
    expect((await formulator.get(`/api/studies/${study.id}`)).body.study.status).toBe('running');

    // To the investigation: empty fields refused beside each, then a re-test outside the scale refused by the server beside its field.
    await form.getByTestId('submit-oos-link').click();
    await page.waitForURL(/[?&]tab=investigations\b/);
    const card = page.getByTestId(`investigation-${inv.id}`);
    await card.waitFor();
    expect(await card.getAttribute('data-status')).toBe('open');
    await card.getByTestId(`close-${inv.id}-submit`).click();
    await expect.poll(() => card.locator('.el-form-item__error').allTextContents()).toEqual(
      expect.arrayContaining(['Say what was checked on the instrument', 'Say what was checked on the calculation', 'Choose a conclusion: confirmed, or invalidated as a lab error', 'Say why (at least 3 characters)']),
    );
    await card.getByTestId(`close-${inv.id}-instrument`).fill('Not an instrument reading: visual grade under the bench lamp');
    await card.getByTestId(`close-${inv.id}-method`).fill('Graded against the photo scale, jar at room temperature for 1 h');
    await card.getByTestId(`close-${inv.id}-sample`).fill('Right jar (code on the label), not shaken before grading');
    await card.getByTestId(`close-${inv.id}-calculation`).fill('None: a direct grade');
    await card.getByTestId(`close-${inv.id}-invalidated`).click();
    await card.getByTestId(`close-${inv.id}-reason`).fill('Graded before the jar came to room temperature');
    await card.getByTestId(`close-${inv.id}-retest`).fill('9');
    await card.getByTestId(`close-${inv.id}-submit`).click();
    await expect.poll(() => card.locator('.el-form-item__error').allTextContents()).toEqual(['9 is not a grade of the Separation scale']);
    expect(await card.locator('.form-error').count()).toBe(0); // said once, beside its field
    await page.setViewportSize(TABLET_1024);
    await page.waitForTimeout(300);
    await page.evaluate(() => window.scrollTo(0, 0)); // the pinned app bar stays at the top of a full-page shot
    await page.screenshot({ path: join(SHOTS, 'study-investigation-close-tablet.png'), fullPage: true });
    await page.setViewportSize(PHONE);
    await page.waitForTimeout(300);
    await page.evaluate(() => window.scrollTo(0, 0)); // the pinned app bar stays at the top of a full-page shot
    await page.screenshot({ path: join(SHOTS, 'study-investigation-close-phone.png'), fullPage: true });
    await page.setViewportSize(VIEWPORTS.desktop);

    // On a second look the separation is real: confirmed, with the reason.
    await card.getByTestId(`close-${inv.id}-confirmed`).click();
    await card.getByTestId(`close-${inv.id}-reason`).fill('Re-graded at room temperature: still a visible layer; the result stands');
    await card.getByTestId(`close-${inv.id}-submit`).click();
    await expect.poll(() => card.getAttribute('data-status')).toBe('closed');
    expect(await card.getByTestId('investigation-conclusion').textContent()).toContain('Confirmed');
    expect(await card.getByTestId('investigation-conclusion').textContent()).toContain('closed by Theo Okafor');
    expect(await page.getByTestId('investigations-open').count()).toBe(0);
    await page.evaluate(() => window.scrollTo(0, 0)); // the pinned app bar stays at the top of a full-page shot
    await page.screenshot({ path: join(SHOTS, 'study-investigation-closed.png'), fullPage: true });

    // Back on the Submit tab the form kept what was typed, the block is gone, and it submits.
    await page.getByRole('tab', { name: 'Submit for review' }).click();
    await expect.poll(() => form.getByTestId('submit-oos-block').count()).toBe(0);
    expect(await form.getByTestId('submit-open-reason').inputValue()).toBe('Week 12 is not needed for A; B goes on in any case');
    await form.getByTestId('submit-for-review').click();
    await expect.poll(() => page.getByTestId('study-status').getAttribute('data-status')).toBe('in_review');
    expect(await page.getByTestId('study-status').textContent()).toContain('In review');
    // The tab is gone with the running status; the page falls back to the grid.
    expect(await page.getByRole('tab', { name: 'Submit for review' }).count()).toBe(0);
    await page.waitForSelector('[data-testid="checkpoint-grid"] table');
    await page.waitForLoadState('networkidle');
    // Grid is the selected tab, and its underline has slid under it (wait for the slide to end before the shot).
    expect(await page.getByRole('tab', { name: 'Grid' }).getAttribute('aria-selected')).toBe('true');
    await expect
      .poll(() =>
        page.evaluate(() => {
          const bar = document.querySelector<HTMLElement>('.study-page .el-tabs__active-bar')!;
          const grid = document.querySelector<HTMLElement>('.study-page #tab-grid')!;
          const under = grid.offsetLeft + Number.parseFloat(getComputedStyle(grid).paddingLeft);
          return Math.round(new DOMMatrix(getComputedStyle(bar).transform).m41 - under);
        }),
      )
      .toBe(0);
    await page.screenshot({ path: join(SHOTS, 'study-in-review.png') });

    // What the server stored is what was typed.
    const review = (await formulator.get(`/api/studies/${study.id}/review`)).body.review;
    const byCode = new Map<number, string>(review.variants.map((v: { id: number; code: string }) => [v.id, v.code]));
    expect(
      review.submission.proposals.map((p: { variantId: number; shelfLifeMonths: number | null; paoMonths?: number | null }) => [byCode.get(p.variantId), p.shelfLifeMonths, p.paoMonths ?? null]),
    ).toEqual([
      ['A', 6, 6],
      ['B', null, null],
    ]);
    expect(review.submission.openCheckpointsReason).toBe('Week 12 is not needed for A; B goes on in any case');
    expect(review.submission.submittedBy).toBe('Theo Okafor');
    // The console errors are the refused submission (409) and the refused re-test (422).
    expect(problems.filter((p) => !/status of (409|422)/.test(p))).toEqual([]);
    await page.close();
  });
});

describe('Release review', () => {
  it('the owner signs a release for A, returns B for more testing, and the queue empties', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.owner);

    // The queue: oldest first, with product, who submitted and how many variants are decided.
    await page.getByTestId('nav-reviews').click();
    const item = page.getByTestId(`queue-${study.id}`);
    await item.waitFor();
    expect(await item.textContent()).toContain('Calendula hand cream');
    expect(await item.textContent()).toContain('Submitted by Theo Okafor');
    expect(await page.getByTestId(`decided-${study.id}`).textContent()).toBe('0 of 2');
    await page.screenshot({ path: join(SHOTS, 'reviews-queue.png') });
    await page.getByTestId(`open-review-${study.id}`).click();
    await page.waitForURL(new RegExp(`/reviews/${study.id}$`));
    const a = page.getByTestId('variant-A');
    const b = page.getByTestId('variant-B');
    await a.waitFor();

    // The evidence: submission, chamber records with MKT, per variant the proposal, suggestion, reasons, failures, photos.
    expect(await page.getByTestId('submission').textContent()).toContain('Week 12 is not needed for A');
    expect(await page.getByTestId('chamber').textContent()).toMatch(/4\d\.\d+ °C/);
    expect(await page.getByTestId('chamber').textContent()).toContain('Outside 45 ± 2 °C');
    expect(await a.getByTestId('proposed').textContent()).toContain('6 months');
    expect(await a.getByTestId('suggested').textContent()).toMatch(/\d+ months|no figure/);
    expect(await b.getByTestId('failures').textContent()).toMatch(/45 °C \d+: first failure at Week 8 \(Separation/);
    expect(await a.getByTestId('failures').textContent()).not.toContain('first failure');
    expect(await a.getByTestId('review-reasons').locator('tbody tr').count()).toBeGreaterThan(2);
    expect(await b.getByTestId('photos-B').locator('img').count()).toBe(3);
    expect(await a.getByTestId('charts-A').getAttribute('href')).toBe(`/studies/${study.id}/analysis`);
    expect(await page.getByTestId('variant-state-A').textContent()).toContain('Awaiting decision');
    // Every out-of-specification result with its investigation's conclusion.
    const oos = page.getByTestId('review-investigations');
    expect(await oos.locator('tbody tr').count()).toBe(1);
    expect(await oos.locator('tbody tr').textContent()).toContain('Separation: grade 2 (FAIL)');
    expect(await oos.getByTestId('investigation-row-conclusion').textContent()).toContain('Confirmed');
    expect(await oos.getByTestId('investigation-row-conclusion').textContent()).toContain('Re-graded at room temperature');
    expect(await oos.textContent()).toContain('every investigation closed');
    await page.waitForFunction(() => [...document.images].every((i) => i.complete && i.naturalWidth > 0));
    await noBadText(page);
    await page.screenshot({ path: join(SHOTS, 'review-desktop.png') });
    await page.screenshot({ path: join(SHOTS, 'review-desktop-full.png'), fullPage: true });
    for (const [name, size] of [['tablet', TABLET_1024], ['phone', PHONE]] as const) {
      await page.setViewportSize(size);
      await page.waitForTimeout(300);
      await oos.scrollIntoViewIfNeeded();
      await page.screenshot({ path: join(SHOTS, `review-investigations-${name}.png`) });
    }
    await page.setViewportSize(VIEWPORTS.desktop);

    // Variant A: released, 6 months, PAO 6; the label dating follows live (30 months or less: best-before).
    await a.getByTestId('decision-A-outcome-released').click();
    await a.getByTestId('decision-A-shelf-life').locator('input').fill('6');
    await a.getByTestId('decision-A-pao').locator('input').fill('6');
    await a.getByTestId('decision-A-comment').fill('Provisional: stable at every condition through week 8; the 45 °C projection gives 7.4 months. Review again at month 6 of the 25 °C study.');
    await a.getByTestId('decision-A-comment').blur();
    // EU Regulation 1223/2009 Art. 19(1)(c): 30 months or less needs a date of minimum durability.
    await expect.poll(() => a.getByTestId('decision-A-label-dating').textContent()).toContain('Best-before date on the pack');
    expect(await a.getByTestId('decision-A-label-dating').textContent()).toContain('19(1)(c)');
    // Lot A was made 96 days ago: 6 months from then is less than 3 months away.
    expect(await a.getByTestId('decision-A-best-before-flag').textContent()).toContain('less than 3 months away');
    expect(await a.getByTestId('decision-A-label-dating').textContent()).toContain("regulatory adviser has the last word");
    // 36 months would switch to the period after opening.
    await a.getByTestId('decision-A-shelf-life').locator('input').fill('36');
    await a.getByTestId('decision-A-shelf-life').locator('input').blur();
    await expect.poll(() => a.getByTestId('decision-A-label-dating').textContent()).toContain('Period after opening on the pack');
    // 36 months is longer than the analysis suggests: a caution beside the field, and the comment becomes required.
    expect(await a.getByTestId('decision-A-longer-caution').textContent()).toMatch(/Longer than the data suggest \(\d+ months?\): say why in the comment/);
    await shot(page, a.locator('.decision-form'), 'review-longer-caution.png');
    await a.getByTestId('decision-A-shelf-life').locator('input').fill('6');
    await a.getByTestId('decision-A-shelf-life').locator('input').blur();
    await expect.poll(() => a.getByTestId('decision-A-label-dating').textContent()).toContain('Best-before date on the pack');

    await a.getByTestId('decision-A-sign').click();
    const dialog = page.getByTestId('sign-dialog-body');
    await dialog.waitFor();
    expect(await page.getByTestId('sign-meaning').textContent()).toBe('approved for release');
    expect(await dialog.textContent()).toContain('SHA-256');
    await page.waitForTimeout(350);
    await page.screenshot({ path: join(SHOTS, 'review-signing-dialog.png') });

    // A wrong password: refused, shown beside the field, nothing signed.
    await page.getByTestId('sign-password').fill('not-my-password');
    await page.getByTestId('sign-confirm').click();
    await expect.poll(() => dialog.locator('.el-form-item__error').textContent()).toBe('Wrong password');
    await page.screenshot({ path: join(SHOTS, 'review-signing-wrong-password.png') });
    expect(await a.getByTestId('signature-block').count()).toBe(0);

    await page.getByTestId('sign-password').fill(DEMO_PASSWORD);
    await page.getByTestId('sign-confirm').click();
    const sigA = a.getByTestId('signature-block');
    await sigA.waitFor();
    expect(await sigA.getAttribute('data-outcome')).toBe('released');
    expect(await sigA.getByTestId('signer-name').textContent()).toBe('Maya Lindqvist');
    expect(await sigA.getByTestId('signature-meaning').textContent()).toBe('approved for release');
    expect(await sigA.textContent()).toMatch(/SHA-256 ([0-9a-f]{8} ){7}[0-9a-f]{8}/);
    expect(await sigA.textContent()).toMatch(/\d{4}-\d\d-\d\d \d\d:\d\d:\d\d UTC/);
    expect(await sigA.textContent()).toContain('Matches the study data as it is now');
    expect(await a.getByTestId('decision-A-sign').count()).toBe(0); // read-only now
    expect(await a.getByTestId('supersede-A').count()).toBe(1);
    await shot(page, sigA, 'review-signature-block.png');

    // Variant B: continue testing, with week 16 added at the 25 °C condition.
    await b.getByTestId('decision-B-outcome-continue_testing').click();
    await expect.poll(() => b.getByTestId('decision-B-new-checkpoint').count()).toBe(1);
    expect(await b.getByTestId('decision-B-new-checkpoint').textContent()).toMatch(/Week 16, due \d{4}-\d\d-\d\d/);
    await b.getByTestId('decision-B-comment').fill('Separation at 45 °C by week 8: watch 25 °C to week 16 before deciding.');
    await b.getByTestId('decision-B-sign').click();
    await dialog.waitFor();
    expect(await page.getByTestId('sign-meaning').textContent()).toBe('returned for more testing');
    await page.getByTestId('sign-password').fill(DEMO_PASSWORD);
    await page.getByTestId('sign-confirm').click();
    const sigB = b.getByTestId('signature-block');
    await sigB.waitFor();
    expect(await sigB.getAttribute('data-outcome')).toBe('continue_testing');
    await expect.poll(() => page.getByTestId('review-status').getAttribute('data-status')).toBe('running');
    expect(await page.getByTestId('status-note').textContent()).toContain('Back in testing');
    expect(await page.getByTestId('decision-history').locator('li').count()).toBe(2);
    expect(await page.getByTestId('variant-state-A').textContent()).toContain('Signed');
    expect(await page.getByTestId('variant-state-B').textContent()).toContain('Back in testing');

    // The queue no longer lists the study.
    await page.getByTestId('nav-reviews').click();
    await page.getByTestId('reviews-empty').waitFor();
    expect(await page.getByTestId(`queue-${study.id}`).count()).toBe(0);

    // The review page (reopened) shows both outcomes; the study got its new checkpoint.
    await page.goto(`${rig.baseUrl}/reviews/${study.id}`);
    await page.getByTestId('variant-A').getByTestId('signature-block').waitFor();
    expect(await page.getByTestId('variant-A').getByTestId('signature-meaning').textContent()).toBe('approved for release');
    expect(await page.getByTestId('variant-B').getByTestId('signature-meaning').textContent()).toBe('returned for more testing');
    const detail = (await owner.get(`/api/studies/${study.id}`)).body.study as StudyDetail;
    expect(detail.checkpoints.some((c) => c.label === 'Week 16')).toBe(true);
    // The PDF button shows a download icon: it downloads the file rather than opening a tab.
    expect(await page.getByTestId('review-pdf').getAttribute('download')).toBe(`stability-report-${study.id}.pdf`);
    await noBadText(page);
    await page.screenshot({ path: join(SHOTS, 'review-decided-full.png'), fullPage: true });

    // The only console error is the refused password's 403.
    expect(problems.filter((p) => !/status of 403/.test(p))).toEqual([]);
    await page.close();
  });

  it('the PDF and the print-friendly report', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.owner);

    // The PDF with the owner's cookies; its first two pages rendered for a look.
    const res = await page.request.get(`${rig.baseUrl}/api/studies/${study.id}/report.pdf`);
    expect(res.status()).toBe(200);
    const pdf = await res.body();
    expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
    const dir = mkdtempSync(join(tmpdir(), 'kw-review-pdf-'));
    writeFileSync(join(dir, 'report.pdf'), pdf);
    const started = Date.now();
    execFileSync('pdftoppm', ['-png', '-r', '70', '-f', '1', '-l', '2', join(dir, 'report.pdf'), join(dir, 'page')]);
    console.info(`pdf: ${pdf.length} bytes, pages 1-2 rendered in ${Date.now() - started} ms`);
    const pngs = readdirSync(dir).filter((f) => f.endsWith('.png')).sort();
    expect(pngs).toHaveLength(2);
    pngs.forEach((f, i) => copyFileSync(join(dir, f), join(SHOTS, `review-pdf-page-${i + 1}.png`)));

    // The web report: same sections, buttons to print and download.
    await page.goto(`${rig.baseUrl}/studies/${study.id}/report`);
    const report = page.getByTestId('report');
    await report.waitFor();
    await expect.poll(() => report.locator('h2').allTextContents()).toEqual([
      'Variants and formulas (as made in each lot)',
      'Storage conditions and chamber records',
      'Schedule',
      'Attributes and acceptance criteria',
      'Charts',
      'Suggested shelf life and reasons',
      'Out-of-specification results',
      'Every observation',
      'Photos at key checkpoints',
      'Decision and signatures',
      'Audit summary',
    ]);
    await expect.poll(() => report.locator('.report-chart').count()).toBe(2); // pH and viscosity
    expect(await report.textContent()).toContain('approved for release');
    expect(await report.textContent()).toContain('returned for more testing');
    expect(await report.textContent()).toContain('Calendula'); // formula lines from the lot's snapshot
    expect(await report.getByTestId('investigation-row-conclusion').textContent()).toContain('Confirmed');
    expect(await page.getByTestId('report-pdf').getAttribute('href')).toBe(`/api/studies/${study.id}/report.pdf`);
    expect(await page.getByTestId('report-pdf').getAttribute('download')).toBe(`stability-report-${study.id}.pdf`);
    expect(await page.getByTestId('report-csv').getAttribute('href')).toBe(`/api/studies/${study.id}/observations.csv`);
    await page.waitForFunction(() => [...document.images].every((i) => i.complete && i.naturalWidth > 0));
    await noBadText(page);
    await page.screenshot({ path: join(SHOTS, 'report-web.png') });
    await page.screenshot({ path: join(SHOTS, 'report-web-full.png'), fullPage: true });

    // Printing hides the app around the report.
    await page.emulateMedia({ media: 'print' });
    expect(await page.locator('header.bar').isVisible()).toBe(false);
    expect(await page.getByTestId('report-print').isVisible()).toBe(false);
    // The browser's own print to PDF: A4, page numbers; its first two pages rendered for a look.
    await page.pdf({ path: join(dir, 'web-print.pdf'), preferCSSPageSize: true, printBackground: true });
    execFileSync('pdftoppm', ['-png', '-r', '70', '-f', '1', '-l', '3', join(dir, 'web-print.pdf'), join(dir, 'web')]);
    const webPages = readdirSync(dir).filter((f) => f.startsWith('web') && f.endsWith('.png')).sort();
    expect(webPages.length).toBeGreaterThanOrEqual(2);
    webPages.forEach((f, i) => copyFileSync(join(dir, f), join(SHOTS, `report-web-print-page-${i + 1}.png`)));
    const printed = execFileSync('pdftotext', ['-layout', join(dir, 'web-print.pdf'), '-']).toString();
    expect(printed).not.toContain('Sign out'); // no app bar on paper
    expect(printed).toMatch(/Page 1 of \d+/);
    expect(problems).toEqual([]);
    await page.close();
  });

  it('releases with ready-phrase conditions, rejects the other variant, then supersedes with a reason', async () => {
    // A second, small study with its initial test recorded on the retained samples (as in tests/api/reviews.test.ts runningStudy()).
    const cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Rose body lotion');
    const plan = { ...planFor(cat, addDays(today, -3)), title: 'Rose body lotion: quick check' };
    const id = (await formulator.post('/api/studies', plan)).body.study.id as number;
    const small = (await formulator.post(`/api/studies/${id}/start`)).body.study as StudyDetail;
    for (const cp of small.checkpoints.filter((c) => c.kind === 'initial')) {
      for (const s of small.samples.filter((x) => x.studyConditionId == null)) {
        const res = await technician.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, {
          entries: small.attributes.map((x) => ({ studyAttributeId: x.id, value: x.code === 'ph' ? 5.5 : x.code === 'separation' ? 0 : 'no_change' })),
        });
        expect(res.status).toBe(200);
      }
    }
    const variantIds = [...new Set(small.batches.map((b) => b.variant.id))];

    // Before it is submitted, the review page does not contradict itself: not submitted, not awaiting a decision.
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.owner);
    await page.goto(`${rig.baseUrl}/reviews/${id}`);
    await page.getByTestId('variant-A').waitFor();
    expect(await page.getByTestId('variant-state-A').textContent()).toContain('Not submitted');
    expect(await page.getByTestId('variant-A').textContent()).toContain('Not awaiting a decision: the study is running and has not been submitted for review.');
    expect(await page.getByTestId('variant-A').textContent()).not.toContain('Awaiting decision');

    const sub = await formulator.post(`/api/studies/${id}/submit`, {
      summary: 'Day 0 only: a quick check before a larger study.',
      proposals: variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 12, paoMonths: 6 })),
      openCheckpointsReason: 'Quick check; the full study follows',
    });
    expect(sub.status, JSON.stringify(sub.body)).toBe(200);

    await page.reload();
    const a = page.getByTestId('variant-A');
    const b = page.getByTestId('variant-B');
    await a.waitFor();
    const sign = async () => {
      await page.getByTestId('sign-dialog-body').waitFor();
      await page.getByTestId('sign-password').fill(DEMO_PASSWORD);
      await page.getByTestId('sign-confirm').click();
    };

    // A: released with conditions, one ready phrase added with a click.
    await a.getByTestId('decision-A-outcome-released_with_conditions').click();
    await a.getByTestId('decision-A-phrase').filter({ hasText: 'Protect from freezing.' }).click();
    expect(await a.getByTestId('decision-A-conditions').inputValue()).toBe('Protect from freezing.');
    await a.getByTestId('decision-A-phrase').filter({ hasText: 'Store below 25 °C.' }).click();
    expect(await a.getByTestId('decision-A-conditions').inputValue()).toBe('Protect from freezing. Store below 25 °C.');
    await a.getByTestId('decision-A-phrase').filter({ hasText: 'Store below 25 °C.' }).click(); // a second click takes it out
    expect(await a.getByTestId('decision-A-conditions').inputValue()).toBe('Protect from freezing.');
    expect(await a.getByTestId('decision-A-shelf-life').locator('input').inputValue()).toBe('12'); // from the proposal
    // A best-before date less than 3 months away is flagged (the lots were made on 2026-11-02).
    await a.getByTestId('decision-A-shelf-life').locator('input').fill('1');
    await a.getByTestId('decision-A-shelf-life').locator('input').blur();
    await expect.poll(() => a.getByTestId('decision-A-best-before-flag').count()).toBe(1);
    await a.getByTestId('decision-A-shelf-life').locator('input').fill('12');
    await a.getByTestId('decision-A-shelf-life').locator('input').blur();
    await expect.poll(() => a.getByTestId('decision-A-best-before-flag').count()).toBe(0);
    await a.getByTestId('decision-A-sign').click();
    await sign();
    await a.getByTestId('signature-block').waitFor();
    expect(await a.getByTestId('signature-block').textContent()).toContain('Protect from freezing.');

    // B: not released, with the comment that says why (required for this outcome), meaning "rejected".
    await b.getByTestId('decision-B-outcome-not_released').click();
    expect(await b.getByTestId('decision-B-shelf-life').count()).toBe(0);
    await b.getByTestId('decision-B-comment').fill('Day-0 viscosity far below the target; reformulate.');
    await b.getByTestId('decision-B-sign').click();
    expect(await page.getByTestId('sign-meaning').textContent()).toBe('rejected');
    await sign();
    await b.getByTestId('signature-block').waitFor();
    await expect.poll(() => page.getByTestId('review-status').getAttribute('data-status')).toBe('decided');

    // Supersede A: a reason is required, then the new decision replaces the old, which stays struck through.
    await a.getByTestId('supersede-A').click();
    await a.getByTestId('decision-A-sign').click();
    await expect.poll(() => a.locator('.el-form-item__error').first().textContent()).toBe('Say why this decision replaces the earlier one');
    await a.getByTestId('decision-A-supersede-reason').fill('Freeze-thaw result came in after signing: the condition is not needed');
    await a.getByTestId('decision-A-outcome-released').click();
    await a.getByTestId('decision-A-shelf-life').locator('input').fill('9');
    await a.getByTestId('decision-A-shelf-life').locator('input').blur();
    await a.getByTestId('decision-A-sign').click();
    await sign();
    await expect.poll(() => a.getByTestId('signature-block').getAttribute('data-outcome')).toBe('released');
    expect(await a.getByTestId('signature-block').textContent()).toContain('Freeze-thaw result came in after signing');
    const history = page.getByTestId('decision-history');
    expect(await history.locator('li').count()).toBe(3);
    const old = history.locator('li.superseded');
    expect(await old.count()).toBe(1);
    expect(await old.textContent()).toContain('Released with conditions');
    expect(await old.textContent()).toMatch(/Replaced by no\. \d+, signed by Maya Lindqvist on .* UTC\)?\. Reason: Freeze-thaw result came in after signing/);
    expect(await old.locator('.struck').first().evaluate((el) => getComputedStyle(el).textDecorationLine)).toBe('line-through');
    await noBadText(page);
    await shot(page, history, 'review-decision-history.png');
    await page.screenshot({ path: join(SHOTS, 'review-superseded-full.png'), fullPage: true });

    // Reviews lists it under Decided, with the outcome in force per variant, linking back here.
    await page.getByTestId('nav-reviews').click();
    const done = page.getByTestId(`decided-study-${id}`);
    await done.waitFor();
    expect(await page.getByTestId('decided-list').locator(':scope > li').first().getAttribute('data-testid')).toBe(`decided-study-${id}`); // latest first
    expect(await page.getByTestId(`decided-${id}-A`).textContent()).toMatch(/A · Released, 9 months/);
    expect(await page.getByTestId(`decided-${id}-B`).textContent()).toMatch(/B · Not released/);
    await noBadText(page);
    await page.screenshot({ path: join(SHOTS, 'reviews-decided.png'), fullPage: true });
    // At phone size the card is one column, its title as wide as the card (the Open link once made a
    // second grid column there and squeezed the title to a word a line).
    await page.setViewportSize(PHONE);
    await expect.poll(async () => Math.round((await done.locator('.main').boundingBox())!.width)).toBeGreaterThan(280);
    await page.screenshot({ path: join(SHOTS, 'reviews-decided-phone.png'), fullPage: true });
    await page.setViewportSize(VIEWPORTS.desktop);
    await page.getByTestId(`open-decided-${id}`).click();
    await page.waitForURL(new RegExp(`/reviews/${id}$`));
    expect(problems).toEqual([]);
    await page.close();
  });

  it('a technician reads the report without the analysis and the decisions, with a note where they were', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/report`);
    await page.getByTestId('report').waitFor();
    await page.getByTestId('analysis-omitted').waitFor();
    const text = await page.getByTestId('report').textContent();
    expect(text).toContain('Left out: decisions and signatures are shown to formulators and owners.');
    expect(text).toContain('Every observation');
    expect(await page.locator('.grid-table.obs tbody tr').count()).toBeGreaterThan(20);
    // A technician cannot open the review page.
    await page.waitForLoadState('networkidle');
    await page.goto(`${rig.baseUrl}/reviews/${study.id}`);
    await page.waitForURL(/not-allowed/);
    await page.waitForLoadState('networkidle');
    expect(problems).toEqual([]);
    await page.close();
  });

  it("another lab's study: no such study, and nothing to print or download", async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    await signInSettled(page, rig.baseUrl, DEMO.otherOwner);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/report`);
    await page.getByText('No such study in your lab').waitFor();
    for (const id of ['report-print', 'report-pdf', 'report-csv']) expect(await page.getByTestId(id).count(), id).toBe(0);
    expect(await page.getByText('Audit trail CSV').count()).toBe(0);
    await page.close();
  });
});
