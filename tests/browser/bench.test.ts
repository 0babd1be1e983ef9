/**
 * The Bench, the sample page, the study grid and the label sheet in headless Chromium, with a
 * running study created through the API: a technician on a tablet works from the Bench.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import QRCode from 'qrcode';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import { DEMO, type Client } from '../helpers/app';
import { SHOTS, VIEWPORTS, signInAs, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, type Catalogue } from '../helpers/fixtures';

const RESULTS = join(process.cwd(), 'test-results');
const TABLET_LANDSCAPE = { width: 1180, height: 820 } as const;
const PHONE = { width: 390, height: 844 } as const;

let rig: BrowserRig;
let formulator: Client;
let cat: Catalogue;
let study: StudyDetail;
let today: string;

beforeAll(async () => {
  rig = await startBrowserRig();
  formulator = await rig.t.signIn(DEMO.formulator);
  // Products, batches and storage conditions come from their own areas; here straight into the lab.
  cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Calendula hand cream');
  today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  // Started 8 days ago: the initial test (on the retained samples, due the start date) is overdue,
  // Week 1 (±1 day) is due, Week 2 is upcoming within 7 days; the fridge control is read beside each oven pull.
  const plan = {
    productId: cat.productId,
    title: 'Calendula cream, emulsifier trial',
    startDate: addDays(today, -8),
    batchIds: cat.batchIds,
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 2 }, { unit: 'week', n: 4 }] },
      { conditionId: cat.conditions.oven45, role: 'accelerated', template: 'accelerated-12w', offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 2 }, { unit: 'week', n: 4 }, { unit: 'week', n: 8 }, { unit: 'week', n: 12 }] },
    ],
    attributes: [
      { attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } },
      { attributeId: cat.attributeIds.viscosity, criterion: { kind: 'change_pct', max: 20 } },
      { attributeId: cat.attributeIds.separation, criterion: { kind: 'worst_grade', grade: 1 } },
      { attributeId: cat.attributeIds.odor, criterion: { kind: 'worst_compared', level: 'slight' } },
    ],
    samplesPerCell: 2,
    containerDescription: '50 mL PET jar, PP lid',
    fillGrams: 45,
    responsibleId: rig.t.labs[0].members[DEMO.technician],
  };
  const created = await formulator.post('/api/studies', plan);
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  study = started.body.study;
});
afterAll(async () => rig?.close());

/** Signs in and lets the Bench's own requests finish, so leaving it aborts nothing. */
async function signIn(page: Page, email: string) {
  await signInAs(page, rig.baseUrl, email);
  await page.waitForFunction(() => document.querySelector('.date-long')?.textContent?.trim() !== '…');
  await page.evaluate(() => document.fonts.ready);
}

async function settle(page: Page) {
  await page.evaluate(() => document.fonts.ready);
  await page.waitForTimeout(250);
}

/** Every visible button and link inside `scope` is at least 48 px tall (touch target). */
async function smallTargets(page: Page, scope: string): Promise<string[]> {
  return page.evaluate((sel) => {
    const out: string[] = [];
    for (const el of document.querySelectorAll<HTMLElement>(`${sel} button, ${sel} a.sample`)) {
      const r = el.getBoundingClientRect();
      if (r.width > 0 && r.height < 48) out.push(`${el.textContent?.trim()} ${Math.round(r.height)}px`);
    }
    return out;
  }, scope);
}

describe('Bench on a tablet', () => {
  it('a technician sees the initial test first, the work grouped by location, a control read beside its pull, an unconfirmed OOS, marks a missed window, opens a sample', async () => {
    // A separation of grade 3 at the oven's Week 1 fails "at worst grade 1": an out-of-specification result nobody has re-measured or confirmed.
    const technician = await rig.t.signIn(DEMO.technician);
    const ovenWeek1 = study.checkpoints.find((c) => c.studyConditionId === study.conditions[1].id && c.label === 'Week 1')!;
    const failing = study.samples.find((s) => s.studyConditionId === study.conditions[1].id)!;
    const separation = study.attributes.find((a) => a.code === 'separation')!;
    const saved = await technician.put(`/api/samples/${failing.code}/checkpoints/${ovenWeek1.id}/observations`, { entries: [{ studyAttributeId: separation.id, value: 3 }] });
    expect(saved.status, JSON.stringify(saved.body)).toBe(200);

    const page = await rig.browser.newPage({ viewport: VIEWPORTS.tablet });
    const problems = watchPage(page);
    await signIn(page, DEMO.technician);
    await page.waitForSelector('[data-testid^="bench-checkpoint-"]');

    // The initial test first (the retained samples, before storage), then by storage location, then condition.
    const locations = await page.locator('.location-name').allTextContents();
    expect(locations[0]).toBe('Initial test (before storage)');
    expect(locations).toEqual(expect.arrayContaining(['fridge 1', 'oven 2']));
    const oven = page.getByTestId('bench-location-oven 2');
    await expect.poll(() => oven.locator('.condition-head').first().textContent()).toContain('45 °C');

    // The initial test: one checkpoint for the study, on the 4 retained samples (2 batches x 2), overdue.
    const initial = study.checkpoints.find((c) => c.kind === 'initial')!;
    const retained = study.samples.filter((s) => s.studyConditionId == null);
    expect(retained).toHaveLength(4);
    const initialCard = page.getByTestId('bench-initial').getByTestId(`bench-checkpoint-${initial.id}`);
    expect(await initialCard.getAttribute('data-state')).toBe('overdue');
    expect(await initialCard.textContent()).toContain('Overdue');
    expect(await initialCard.locator('a.sample').count()).toBe(4);
    for (const r of retained) expect(await initialCard.getByTestId(`bench-sample-${r.code}`).count()).toBe(1);
    expect(await page.getByTestId('bench-initial').locator('.condition-head').textContent()).toContain('Retained samples');

    // Pulls: Week 1 due, Week 2 upcoming, per condition; no Day 0 in any condition.
    const ovenCps = study.checkpoints.filter((c) => c.studyConditionId === study.conditions[1].id);
    const fridgeCps = study.checkpoints.filter((c) => c.studyConditionId === study.conditions[0].id);
    expect(study.checkpoints.filter((c) => c.label === 'Day 0')).toEqual([]);
    const week1 = ovenCps.find((c) => c.label === 'Week 1')!;
    const week2 = ovenCps.find((c) => c.label === 'Week 2')!;
    expect(await page.getByTestId(`bench-checkpoint-${week1.id}`).getAttribute('data-state')).toBe('due');
    expect(await page.getByTestId(`bench-checkpoint-${week2.id}`).getAttribute('data-state')).toBe('upcoming');
    expect(await page.getByTestId(`bench-checkpoint-${week1.id}`).textContent()).toContain('15 of 16 readings to record');
    // Due first within a condition.
    const order = await oven.locator('[data-testid^="bench-checkpoint-"]').evaluateAll((els) => els.map((e) => e.getAttribute('data-state')));
    expect(order).toEqual(['due', 'upcoming']);

    // The fridge control's Week 1 is read beside the oven's Week 1 (the same day), and says so.
    const fridgeWeek1 = fridgeCps.find((c) => c.dueDate === week1.dueDate)!;
    expect(week1.controlCheckpointId).toBe(fridgeWeek1.id);
    const serves = page.getByTestId(`bench-checkpoint-${fridgeWeek1.id}`).getByTestId('bench-serves');
    expect(await serves.textContent()).toMatch(new RegExp(`Read beside:\\s*${study.conditions[1].name} Week 1`));
    expect(await page.getByTestId(`bench-checkpoint-${week1.id}`).getByTestId('bench-serves').count()).toBe(0);

    // The failing separation saved through the API is marked "Unconfirmed OOS" on its sample, in words.
    const mark = page.getByTestId(`bench-checkpoint-${week1.id}`).getByTestId(`bench-unconfirmed-${failing.code}`);
    expect(await mark.textContent()).toContain('Unconfirmed OOS');
    expect(await page.locator('[data-testid^="bench-unconfirmed-"]').count()).toBe(1);

    // Counts as text chips: the initial test overdue, 2 conditions x (Week 1 due, Week 2 upcoming).
    expect(await page.getByTestId('count-overdue').textContent()).toMatch(/1\s*overdue/);
    expect(await page.getByTestId('count-due').textContent()).toMatch(/2\s*due today/);
    expect(await page.getByTestId('count-upcoming').textContent()).toMatch(/2\s*in the next 7 days/);
    expect(await smallTargets(page, '.bench')).toEqual([]);

    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'bench-tablet-portrait.png'), fullPage: true });
    await page.setViewportSize(TABLET_LANDSCAPE);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'bench-tablet-landscape.png'), fullPage: true });
    await page.setViewportSize(PHONE);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'bench-phone.png'), fullPage: true });
    await page.setViewportSize(VIEWPORTS.tablet);

    // Mark the overdue initial test missed: a too-short reason is refused beside the field, then it goes.
    await page.getByTestId(`mark-missed-${initial.id}`).click();
    await page.getByTestId('missed-reason').fill('x');
    await page.getByTestId('missed-save').click();
    await expect.poll(() => page.locator('.el-dialog .el-form-item__error').textContent()).toContain('at least 3 characters');
    const dialogButtons = await page.locator('.el-dialog__footer button').evaluateAll((els) => els.map((e) => Math.round(e.getBoundingClientRect().height)));
    expect(Math.min(...dialogButtons)).toBeGreaterThanOrEqual(48);
    await page.screenshot({ path: join(SHOTS, 'bench-missed-dialog.png') });
    await page.getByTestId('missed-reason').fill('Balance out of service on the start day; retained samples were not read');
    await page.getByTestId('missed-save').click();
    await expect.poll(() => page.getByTestId(`bench-checkpoint-${initial.id}`).count()).toBe(0);
    expect(await page.getByTestId('bench-initial').count()).toBe(0);
    expect(await page.getByTestId('count-overdue').textContent()).toMatch(/0\s*overdue/);

    // A sample button opens the Record screen for that sample at that checkpoint, which links to the sample page.
    const sample = failing;
    await page.getByTestId(`bench-checkpoint-${week1.id}`).getByTestId(`bench-sample-${sample.code}`).click();
    await page.waitForURL(new RegExp(`/samples/${sample.code}/checkpoints/${week1.id}$`));
    await expect.poll(() => page.getByTestId('record-sample-code').textContent()).toBe(sample.code);
    expect(await page.getByTestId('record-checkpoint').textContent()).toBe('Week 1');
    await page.getByTestId('record-sample-link').click();
    await page.waitForURL(new RegExp(`/samples/${sample.code}$`));
    await expect.poll(() => page.getByTestId('sample-code').textContent()).toBe(sample.code);
    const text = (await page.locator('.sample-page').textContent()) ?? '';
    expect(text).toContain('Calendula cream, emulsifier trial');
    expect(text).toContain('oven 2');
    expect(text).toContain('50 mL PET jar, PP lid');
    expect(text).toMatch(/Record (Day|Week)/);
    // The 45 °C oven's caution on the sample page too.
    expect(await page.getByTestId('sample-cautions').getByTestId('caution-hot').textContent()).toContain('heat-resistant gloves');
    // The oven's five pulls (the initial test belongs to the retained samples).
    expect(await page.getByTestId('sample-checkpoints').locator('li').count()).toBe(5);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'sample-tablet.png'), fullPage: true });

    // From the sample to its study, whose grid renders.
    await page.getByTestId('sample-study-link').click();
    await page.waitForSelector('[data-testid="checkpoint-grid"] table');
    expect(problems).toEqual([]);
    await page.close();
  });
});

describe('Study page', () => {
  it('shows the plan in words and the samples x checkpoints grid with a legend', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signIn(page, DEMO.technician);
    await page.goto(`${rig.baseUrl}/studies/${study.id}`);
    await page.waitForSelector('[data-testid="checkpoint-grid"] table');
    expect(await page.getByTestId('study-title').textContent()).toBe('Calendula cream, emulsifier trial');
    // The initial test first: the 4 retained samples (2 batches x 2) in one "Initial" column, missed on the Bench above.
    const initialGrid = page.getByTestId('grid-initial');
    expect(await initialGrid.locator('tbody tr').count()).toBe(4);
    expect(await initialGrid.locator('thead th').allTextContents()).toEqual(['Retained sample', expect.stringContaining('Initial')]);
    // Each cell names its state in words, never by color alone.
    expect(await initialGrid.locator('a.cell').first().textContent()).toContain('Missed');
    // Rows are samples, columns checkpoints: 2 batches x 2 replicates per condition; no Day 0 in a condition.
    const oven = page.getByTestId(`grid-condition-${study.conditions[1].id}`);
    expect(await oven.locator('tbody tr').count()).toBe(4);
    expect(await oven.locator('thead th').count()).toBe(1 + 5);
    const states = await oven.locator('tbody tr').first().locator('a.cell').evaluateAll((els) => els.map((e) => e.getAttribute('data-state')));
    expect(states).toEqual(['due', 'upcoming', 'upcoming', 'upcoming', 'upcoming']);
    // Each pull names the control reading it is judged beside; the fridge gained readings on the oven's Week 8 and 12.
    expect(await oven.getByTestId('control-hint').allTextContents()).toEqual(['Week 1', 'Week 2', 'Week 4', 'Week 8', 'Week 12'].map((w) => `with control ${w}`));
    const fridge = page.getByTestId(`grid-condition-${study.conditions[0].id}`);
    expect(await fridge.locator('thead .cp-label').allTextContents()).toEqual(['Week 1', 'Week 2', 'Week 4', 'Week 8', 'Week 12']);
    expect(await fridge.getByTestId('control-hint').count()).toBe(0);
    // The header counts the work due now (a running study): Week 1 in both conditions.
    expect(await page.locator('header.head .facts').textContent()).toMatch(/2\s*due/);
    // One open investigation (the failing separation): a badge in words on its tab.
    expect(await page.getByTestId('investigations-open').textContent()).toMatch(/1\s*open/);
    expect(await page.locator('.legend').textContent()).toContain('window closed, nothing recorded');
    // Technicians get no amendment form and no edit link.
    expect(await page.getByTestId('edit-link').count()).toBe(0);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'study-grid-desktop.png'), fullPage: true });
    await page.setViewportSize(PHONE);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'study-grid-phone.png'), fullPage: true });
    await page.setViewportSize(VIEWPORTS.desktop);

    // The technician reads the investigation: the failing value, "Unconfirmed", no form to close it.
    await page.getByRole('tab', { name: /Investigations/ }).click();
    await page.waitForURL(/[?&]tab=investigations\b/);
    const inv = page.getByTestId('investigations').locator('[data-testid^="investigation-"][data-status]');
    await expect.poll(() => inv.count()).toBe(1);
    expect(await inv.getByTestId('investigation-failed').textContent()).toBe('grade 3');
    expect(await inv.getByTestId('investigation-unconfirmed').textContent()).toContain('Unconfirmed');
    expect(await inv.getByTestId('investigation-readonly').textContent()).toContain('A formulator or the owner closes the investigation');
    expect(await inv.locator('form').count()).toBe(0);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'study-investigations-technician.png'), fullPage: true });

    await page.getByRole('tab', { name: 'Plan' }).click();
    await page.waitForSelector('[data-testid="study-plan"]');
    const criteria = await page.getByTestId('criterion-text').allTextContents();
    expect(criteria).toEqual(['within ±0.5 of day 0', 'within ±20 % of day 0', 'at worst grade 1', 'at worst slight change vs control']);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'study-plan-desktop.png'), fullPage: true });
    await page.getByRole('tab', { name: /Amendments/ }).click();
    expect(await page.getByTestId('amendment-form').count()).toBe(0);
    expect(problems).toEqual([]);
    await page.close();
  });

  it('a formulator adds a checkpoint by amendment; the server field error shows beside the field', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signIn(page, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${study.id}?tab=amendments`);
    await page.waitForSelector('[data-testid="amendment-form"]');
    await page.getByTestId('amend-condition').click();
    await page.locator('.el-select-dropdown__item', { hasText: study.conditions[1].name }).click();
    // Week 4 is already planned: the server answers 409 with a field message beside "Time point".
    await page.getByTestId('amend-n').locator('input').fill('4');
    await page.getByTestId('amend-reason').fill('Extra point to check the thickener');
    await page.getByTestId('amend-submit').click();
    await expect.poll(() => page.locator('[data-testid="amendment-form"] .el-form-item__error').allTextContents()).toContain('Already planned');
    await page.getByTestId('amend-n').locator('input').fill('6');
    await page.getByTestId('amend-n').locator('input').blur();
    await page.getByTestId('amend-submit').click();
    await expect.poll(() => page.getByTestId('amendment-list').textContent()).toContain('Week 6 in');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'study-amendments-desktop.png'), fullPage: true });
    expect(problems.filter((p) => !p.includes('409'))).toEqual([]);
    await page.close();
  });
});

describe('Draft study and empty Bench', () => {
  it('a draft shows its plan with a Start hint for formulators; another lab sees an empty Bench and no study', async () => {
    const plan = {
      productId: cat.productId,
      title: 'Calendula cream, light test (draft)',
      startDate: addDays(today, 3),
      batchIds: [cat.batchIds[0]],
      conditions: [{ conditionId: cat.conditions.oven45, role: 'accelerated', template: 'accelerated-12w', offsets: [{ unit: 'week', n: 1 }] }],
      attributes: [{ attributeId: cat.attributeIds.ph, criterion: { kind: 'range', min: 5, max: 6.5 } }],
    };
    const created = await formulator.post('/api/studies', plan);
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.tablet });
    const problems = watchPage(page);
    await signIn(page, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${created.body.study.id}`);
    await page.waitForSelector('[data-testid="study-plan"]');
    expect(await page.getByTestId('draft-hint').textContent()).toContain('Start');
    expect(await page.getByTestId('edit-link').getAttribute('href')).toBe(`/studies/${created.body.study.id}/edit`);
    expect(await page.getByTestId('labels-link').count()).toBe(0);
    expect(await page.getByTestId('criterion-text').allTextContents()).toEqual(['within 5–6.5']);
    // Nothing to grid or amend before the start: only the plan tab.
    expect(await page.getByRole('tab').allTextContents()).toEqual(['Plan']);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'study-draft-tablet.png'), fullPage: true });
    await page.close();

    // Another lab: nothing on its Bench (with the technician's advice), and the study answers "no such study".
    const other = await rig.browser.newPage({ viewport: VIEWPORTS.tablet });
    const otherProblems = watchPage(other);
    await signIn(other, DEMO.otherTechnician);
    await expect.poll(() => other.locator('.empty').textContent()).toContain('A formulator or the owner plans studies');
    await settle(other);
    await other.screenshot({ path: join(SHOTS, 'bench-empty-tablet.png'), fullPage: true });
    await other.goto(`${rig.baseUrl}/studies/${study.id}`);
    await expect.poll(() => other.locator('.empty h2').textContent()).toBe('No such study');
    await other.goto(`${rig.baseUrl}/samples/${study.samples[0].code}`);
    await expect.poll(() => other.locator('.empty h2').textContent()).toBe('No sample with this code');
    expect(problems).toEqual([]);
    expect(otherProblems.filter((p) => !p.includes('404'))).toEqual([]);
    await other.close();
  });
});

describe('Label sheet', () => {
  it('renders QR labels on A4 and Letter, and prints to a PDF of the chosen paper', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signIn(page, DEMO.technician);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/labels`);
    await page.waitForSelector('[data-testid="label"] .qr svg');
    expect(await page.getByTestId('label').count()).toBe(study.samples.length);
    const first = page.getByTestId('label').first();
    const code = await first.getAttribute('data-code');
    const text = (await first.textContent()) ?? '';
    expect(text).toContain(code);
    expect(text).toContain('Calendula hand cream');
    expect(text).toMatch(/Lot T\d+-A/);
    // The QR code encodes the sample page's address (same library and options, rendered in Node, same modules).
    // The browser fetched the sheet from the app, so the address is the app's own.
    const url = `${rig.baseUrl}/samples/${code}`;
    const expected = await QRCode.toString(url, { type: 'svg', margin: 2, errorCorrectionLevel: 'M' });
    const path = (svg: string) => /<path[^>]*stroke="#000000"[^>]*d="([^"]+)"/.exec(svg)?.[1];
    expect(path(await first.locator('.qr').innerHTML())).toBe(path(expected));
    // A 63.5 x 38.1 mm label is 240 x 144 CSS px (96 px per inch).
    const box = (await first.boundingBox())!;
    expect(box.width).toBeCloseTo((63.5 / 25.4) * 96, 0);
    expect(box.height).toBeCloseTo((38.1 / 25.4) * 96, 0);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'labels.png'), fullPage: true });

    // Printing hides the app chrome and the options.
    await page.emulateMedia({ media: 'print' });
    expect(await page.locator('.shell > header').isVisible()).toBe(false);
    expect(await page.locator('.options').isVisible()).toBe(false);
    await page.emulateMedia({ media: null }); // page.pdf() prints with print CSS only when no media is forced

    mkdirSync(RESULTS, { recursive: true });
    const pdfPath = join(RESULTS, 'labels.pdf');
    await page.pdf({ path: pdfPath, preferCSSPageSize: true, printBackground: true });
    expect(statSync(pdfPath).size).toBeGreaterThan(5000);
    const info = execFileSync('pdfinfo', [pdfPath]).toString();
    // A4 is 595.28 x 841.89 pt (210 x 297 mm at 72 pt per inch).
    expect(info).toMatch(/Page size:\s+59[45]\.\d+ x 841\.\d+ pts \(A4\)/);
    expect(info).toMatch(/Pages:\s+1\b/);
    if (existsSync('/usr/bin/pdftoppm')) {
      execFileSync('pdftoppm', ['-png', '-r', '60', '-f', '1', '-l', '1', '-singlefile', pdfPath, join(RESULTS, 'labels-pdf-page1')]);
    }

    // US Letter, 2 5/8 x 1 in, 30 per sheet.
    await page.getByTestId('paper').getByText('US Letter').click();
    await expect.poll(() => page.locator('.sheet').first().getAttribute('data-layout')).toBe('letter-30');
    // Polled: once a run measured the A4 label (240 px) just after the switch, right after printing the A4 PDF.
    const letterWidth = async () => Math.round((await page.getByTestId('label').first().boundingBox())!.width);
    await expect.poll(letterWidth).toBe(Math.round(2.625 * 96));
    const letterBox = (await page.getByTestId('label').first().boundingBox())!;
    expect(letterBox.width).toBeCloseTo(2.625 * 96, 0);
    expect(letterBox.height).toBeCloseTo(96, 0);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'labels-letter.png'), fullPage: true });
    const letterPdf = join(RESULTS, 'labels-letter.pdf');
    await page.pdf({ path: letterPdf, preferCSSPageSize: true, printBackground: true });
    expect(execFileSync('pdfinfo', [letterPdf]).toString()).toMatch(/Page size:\s+612 x 792 pts/);
    expect(problems).toEqual([]);
    await page.close();
  });
});
