/**
 * The product file in headless Chromium (issue #17): a formulator fills the microbial-risk panel of an
 * anhydrous balm (the demo body butter: no water among its lines) and sees "Low risk" by anhydrous
 * (ISO 29621 as summarised publicly by testing laboratories: an anhydrous product is low risk); on the
 * emulsion (the demo hand cream B, pH 5.5 in a jar) sees "Not low risk" and attaches a challenge-test
 * report, a real PDF made here with pdfmake; the owner's review page lists it with its SHA-256, and the
 * PDF report lists it too (page rendered with pdftoppm to test-results/product-file/).
 * Phone (390x844), tablet (1024x768) and desktop screenshots go to test-results/screenshots/.
 */
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seedFormulas, type SeededFormulas } from '../../server/demo/formulas';
import { simplePdf } from '../../server/services/pdf-engine';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse } from '../../shared/schemas/studies';
import { DEMO, type Client } from '../helpers/app';
import { SHOTS, VIEWPORTS, axeViolations, signInSettled, startBrowserRig, trackRequests, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue } from '../helpers/fixtures';

let rig: BrowserRig;
let formulator: Client, owner: Client;
let demo: SeededFormulas;
let studyId: number;
let pdf: Buffer;
const OUT = join(process.cwd(), 'test-results', 'product-file');
const PHONE = { width: 390, height: 844 } as const;
const TABLET = { width: 1024, height: 768 } as const;

function input(page: Page, testId: string) {
  return page.locator(`input[data-testid="${testId}"], [data-testid="${testId}"] input`).first();
}
async function choose(page: Page, select: ReturnType<Page['locator']>, option: string) {
  await select.click();
  await page.getByRole('option', { name: option, exact: true }).click();
  await expect.poll(() => page.locator('.el-select__popper:visible').count()).toBe(0);
}

beforeAll(async () => {
  rig = await startBrowserRig();
  [formulator, owner] = await Promise.all([rig.t.signIn(DEMO.formulator), rig.t.signIn(DEMO.owner)]);
  const lab = rig.t.labs[0];
  demo = await rig.t.db.transaction((tx) => seedFormulas(tx, lab.id, lab.members[DEMO.formulator]));
  const cat = await makeCatalogue(rig.t.db, lab.id);
  const today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  const created = await formulator.post('/api/studies', {
    productId: demo.products.handCream,
    title: 'Hand cream A vs B: release study',
    startDate: addDays(today, -14),
    batchIds: demo.batches.slice(0, 2),
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
      { conditionId: cat.conditions.oven45, role: 'accelerated', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
    ],
    attributes: [{ attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } }],
    samplesPerCell: 1,
    containerDescription: '50 mL PET jar',
    fillGrams: 45,
  });
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  studyId = created.body.study.id;
  const started = await formulator.post(`/api/studies/${studyId}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  const variantIds = [...new Set(started.body.study.batches.map((b: { variant: { id: number } }) => b.variant.id))] as number[];
  const sub = await formulator.post(`/api/studies/${studyId}/submit`, {
    summary: 'Both variants held so far; ending early for the product file test.',
    proposals: variantIds.map((variantId) => ({ variantId, shelfLifeMonths: 12, paoMonths: 6 })),
    openCheckpointsReason: 'Test: the review of the product file only',
  });
  expect(sub.status, JSON.stringify(sub.body)).toBe(200);
  pdf = await simplePdf('Preservative efficacy test report (test, invented)', ['Calendula hand cream B.', 'ISO 11930: criteria A met (invented).']);
  mkdirSync(OUT, { recursive: true });
});
afterAll(async () => rig?.close());

describe('product file', () => {
  it('a formulator fills the risk panel of an anhydrous balm and sees low risk', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/formulas/variants/${demo.variants.bodyButterA}`);
    const panel = page.getByTestId('risk-panel');
    await expect.poll(() => panel.getByTestId('risk-outcome').textContent()).toMatch(/Low risk by anhydrous/);
    await input(page, 'risk-fill').fill('70');
    await choose(page, page.getByTestId('risk-pack'), 'Open jar (fingers in the product)');
    await choose(page, page.getByTestId('risk-pao-decided'), '12 months');
    const saved = page.waitForResponse((r) => r.url().endsWith(`/api/variants/${demo.variants.bodyButterA}/risk`) && r.request().method() === 'PUT');
    await page.getByTestId('risk-save').click();
    expect((await saved).status()).toBe(200);
    await expect.poll(() => panel.getByTestId('risk-outcome').textContent()).toMatch(/^\s*Low risk\s*Low risk by anhydrous: a challenge test is usually not needed/);
    expect(await panel.getByTestId('factor-anhydrous').textContent()).toMatch(/water 0 % w\/w.*0 % w\/w water.*met/);
    expect(await panel.getByTestId('factor-filling_temperature').textContent()).toMatch(/> 65 °C.*70 °C.*met/);
    expect(await panel.textContent()).toMatch(/Guidance for the safety assessor, not a decision/);
    await panel.screenshot({ path: join(SHOTS, 'risk-panel-balm.png') });
    expect(await axeViolations(page, { exclude: ['.el-message'] })).toEqual([]);
    await page.setViewportSize(PHONE);
    await page.screenshot({ path: join(SHOTS, 'risk-panel-balm-phone.png'), fullPage: true });
    expect(problems).toEqual([]);
    await page.close();
  });

  it('attaches a challenge-test report to the emulsion', async () => {
    const page = await rig.browser.newPage({ viewport: TABLET });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/formulas/variants/${demo.variants.handCreamB}`);
    const panel = page.getByTestId('risk-panel');
    await expect.poll(() => panel.getByTestId('risk-outcome').textContent()).toMatch(/Not low risk/);
    await input(page, 'risk-ph').fill('5.5');
    await page.getByTestId('risk-save').click();
    await expect.poll(() => panel.textContent()).toMatch(/Saved by/);
    expect(await panel.getByTestId('risk-outcome').textContent()).toMatch(/Not low risk: a preservative efficacy test to ISO 11930 is expected/);

    await page.getByTestId('attach-document').click();
    const form = page.getByTestId('document-form');
    await input(page, 'doc-title').fill('Challenge test, hand cream B');
    await input(page, 'doc-date').fill('2026-11-20');
    await input(page, 'doc-author').fill('Contract microbiology lab (invented)');
    await page.locator('[data-testid="doc-summary"] textarea, textarea[data-testid="doc-summary"]').first().fill('28-day ISO 11930 test; all five organisms meet criterion A.');
    await form.getByText('A met', { exact: true }).click();
    await form.getByRole('radiogroup', { name: 'Result for Pseudomonas aeruginosa' }).getByText('Meets').click();
    await page.getByTestId('doc-file').setInputFiles({ name: 'challenge-test-B.pdf', mimeType: 'application/pdf', buffer: pdf });
    const sent = page.waitForResponse((r) => r.url().endsWith(`/api/variants/${demo.variants.handCreamB}/documents`));
    await page.getByTestId('doc-send').click();
    expect((await sent).status()).toBe(201);
    const list = page.getByTestId('variant-documents');
    await expect.poll(() => list.textContent()).toMatch(/Challenge test, hand cream B/);
    const sha = createHash('sha256').update(pdf).digest('hex');
    expect(await list.getByTestId('doc-sha').textContent()).toBe(sha);
    expect(await list.textContent()).toMatch(/ISO 11930 criteria A met/);
    await list.screenshot({ path: join(SHOTS, 'product-file-documents.png') });
    expect(await axeViolations(page, { exclude: ['.el-message'] })).toEqual([]);
    expect(problems).toEqual([]);
    await page.close();
  });

  it("the owner's review shows the report with its SHA-256, and the PDF report lists it", async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.owner);
    const requests = trackRequests(page);
    await page.goto(`${rig.baseUrl}/reviews/${studyId}`);
    const pf = page.getByTestId('product-file');
    await expect.poll(() => pf.textContent(), { timeout: 15_000 }).toMatch(/Challenge test, hand cream B/);
    await requests.quiet();
    expect(await pf.getByTestId('pf-B-challenge_test').textContent()).toMatch(/present/);
    // A has no assessment yet: its challenge test is listed as expected and missing.
    expect(await pf.getByTestId('pf-A-challenge_test').textContent()).toMatch(/missing/);
    expect(await pf.getByTestId('doc-sha').textContent()).toBe(createHash('sha256').update(pdf).digest('hex'));
    await pf.screenshot({ path: join(SHOTS, 'review-product-file.png') });
    expect(await axeViolations(page, { exclude: ['.el-message'] })).toEqual([]);
    await page.setViewportSize(PHONE);
    await pf.screenshot({ path: join(SHOTS, 'review-product-file-phone.png') });
    expect(problems).toEqual([]);
    await page.close();

    const res = await owner.agent
      .get(`/api/studies/${studyId}/report.pdf`)
      .buffer(true)
      .parse((r, cb) => {
        const chunks: Buffer[] = [];
        r.on('data', (b: Buffer) => chunks.push(b));
        r.on('end', () => cb(null, Buffer.concat(chunks)));
      });
    expect(res.status).toBe(200);
    const file = join(OUT, 'report.pdf');
    writeFileSync(file, res.body as Buffer);
    const pages = execFileSync('pdftotext', ['-layout', file, '-']).toString().split('\f');
    const at = pages.findIndex((p) => p.includes('Microbial risk, period after opening and product file'));
    expect(at).toBeGreaterThanOrEqual(0);
    const text = pages.slice(at, at + 2).join('\n');
    expect(text).toMatch(/Challenge test, hand cream B/);
    expect(text.replace(/\s+/g, '')).toContain(createHash('sha256').update(pdf).digest('hex'));
    execFileSync('pdftoppm', ['-png', '-r', '70', '-f', String(at + 1), '-l', String(at + 1), file, join(OUT, 'report-product-file')]);
  });
});
