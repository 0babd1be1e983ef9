/**
 * The analysis and comparison pages in headless Chromium, on a running study whose results are
 * recorded through the API (as in tests/api/analysis.test.ts): a formulator sees the charts, the
 * suggested shelf life with its reasons, changes Q10, downloads a chart's CSV and compares the two
 * variants. Invented data: variant A holds; variant B separates at 45 °C from week 8, its pH
 * drifts towards the limit at 25 °C and it separates a little after 3 freeze-thaw cycles.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import { DEMO, type Client } from '../helpers/app';
import { SHOTS, VIEWPORTS, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, uploadHourlyLogs, type Catalogue } from '../helpers/fixtures';

let rig: BrowserRig;
let formulator: Client;
let cat: Catalogue;
let study: StudyDetail;
let today: string;

/** The sizes the analysis and comparison pages are looked at in (issue 13): a laptop and a landscape tablet. */
const LAPTOP = { width: 1280, height: 800 };
const TABLET_LANDSCAPE = { width: 1024, height: 768 };

const W = (n: number) => ({ unit: 'week' as const, n });
const C = (n: number) => ({ unit: 'cycle' as const, n });

beforeAll(async () => {
  rig = await startBrowserRig();
  formulator = await rig.t.signIn(DEMO.formulator);
  cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Calendula hand cream');
  today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  const start = addDays(today, -91);
  const weekly = [W(1), W(2), W(4), W(8), W(12)];
  const a = cat.attributeIds;
  const created = await formulator.post('/api/studies', {
    productId: cat.productId,
    title: 'Calendula cream, emulsifier trial',
    startDate: start,
    batchIds: cat.batchIds,
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
      { attributeId: a.color_l, criterion: { kind: 'none' } },
      { attributeId: a.color_a, criterion: { kind: 'none' } },
      { attributeId: a.color_b, criterion: { kind: 'none' } },
    ],
    samplesPerCell: 2,
    containerDescription: '50 mL PET jar, PP lid',
    fillGrams: 45,
  });
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  study = started.body.study;

  const roleOf = new Map(study.conditions.map((c) => [c.id, c.role]));
  const ids = Object.fromEntries(study.attributes.map((x) => [x.code, x.id]));
  // The initial test on the retained samples (no condition; the t = 0 point of every condition), then every pull and paired control reading.
  for (const cp of study.checkpoints) {
    const role = cp.studyConditionId == null ? undefined : roleOf.get(cp.studyConditionId);
    const hot = role === 'accelerated';
    const room = role === 'real_time';
    const ft = role === 'stress';
    const w = cp.offset.unit === 'week' ? cp.offset.n : 0;
    const cycles = cp.offset.unit === 'cycle' ? cp.offset.n : 0;
    for (const s of study.samples.filter((x) => x.studyConditionId === cp.studyConditionId)) {
      const isB = s.batchId === cat.batchIds[1];
      const jitter = (((w * 7 + s.replicate * 3 + (isB ? 1 : 0)) % 5) - 2) * 0.006;
      const phRate = hot ? (isB ? 0.04 : 0.015) : room ? (isB ? 0.02 : 0.004) : 0.001;
      const ph = Math.round((5.5 + (isB ? 0.02 : 0) - phRate * w + jitter) * 100) / 100;
      const visc0 = isB ? 14000 : 12000;
      const viscRate = hot ? (isB ? 0.025 : 0.01) : room ? 0.003 : 0;
      const viscosity = Math.round(visc0 * (1 - viscRate * w) + jitter * 2000);
      const separation = isB && hot ? (w >= 8 ? 3 : w >= 4 ? 1 : 0) : isB && ft && cycles >= 3 ? 2 : 0;
      const odor = hot && w >= 12 ? (isB ? 'marked' : 'slight') : hot && isB && w >= 8 ? 'slight' : 'no_change';
      const drift = hot ? (isB ? 1.8 : 1) : room ? 0.3 : 0;
      const entries = [
        { studyAttributeId: ids.ph, value: ph },
        { studyAttributeId: ids.viscosity, value: viscosity },
        { studyAttributeId: ids.separation, value: separation },
        { studyAttributeId: ids.odor, value: odor },
        { studyAttributeId: ids.color_l, value: Math.round((82 - 0.08 * drift * w + jitter) * 100) / 100 },
        { studyAttributeId: ids.color_a, value: Math.round((1.2 + 0.02 * drift * w) * 100) / 100 },
        { studyAttributeId: ids.color_b, value: Math.round((8.5 + 0.12 * drift * w + jitter) * 100) / 100 },
      ];
      const res = await formulator.put(`/api/samples/${s.code}/checkpoints/${cp.id}/observations`, { entries });
      expect(res.status, JSON.stringify(res.body)).toBe(200);
    }
  }

  // Chamber logs for the oven and the 25 °C cabinet over the study so far: MKT beside each.
  await uploadHourlyLogs(formulator, [
    [cat.conditions.oven45, 45],
    [cat.conditions.room, 25],
  ], start, 90 * 24, { every: 500, c: 2.5 });
}, 240_000);
afterAll(async () => rig?.close());

/** Signed in, and the Bench's fonts loaded too, so leaving it aborts no font request (which watchPage reports). */
async function signedIn(page: Page, email: string) {
  await signInSettled(page, rig.baseUrl, email);
  await page.evaluate(() => document.fonts.ready);
  await page.waitForLoadState('networkidle');
}

async function chartsSettled(page: Page) {
  await page.waitForSelector('.kw-chart canvas');
  await expect
    .poll(() => page.locator('.kw-chart[data-rendered="false"]').count(), { timeout: 30_000 })
    .toBe(0);
  await page.evaluate(() => document.fonts.ready);
  await page.waitForTimeout(400);
}

/** An element screenshot with the app bar unpinned, so a tall element is not crossed by it. */
async function shot(page: Page, testId: string, file: string) {
  await page.addStyleTag({ content: 'header.bar { position: static !important; }' });
  const el = page.getByTestId(testId);
  await el.scrollIntoViewIfNeeded();
  await page.waitForTimeout(300);
  await el.screenshot({ path: join(SHOTS, file) });
}

async function noBadNumbers(page: Page) {
  const text = await page.locator('main, .kw-page').first().innerText();
  expect(text).not.toMatch(/\bNaN\b|\bundefined\b|Infinity/);
}

describe('Analysis page', () => {
  it('a formulator sees the charts, the suggested shelf life with its reasons, changes Q10 and gets the CSV', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop, acceptDownloads: true });
    const problems = watchPage(page);
    await signedIn(page, DEMO.formulator);
    const opened = Date.now();
    await page.goto(`${rig.baseUrl}/studies/${study.id}/analysis`);
    await page.waitForSelector('[data-testid="analysis-title"]');
    await chartsSettled(page);
    console.info(`analysis page: ${await page.locator('.kw-chart').count()} charts drawn ${Date.now() - opened} ms after navigation`);
    await page.screenshot({ path: join(SHOTS, 'analysis-desktop.png') });

    // charts: pH, viscosity, L*, a*, b* x 4 conditions, ΔE, and separation + odor heat grids, each in two
    // (in time, and freeze-thaw cycles apart)
    expect(await page.locator('[data-testid="measured-ph"] .kw-chart').count()).toBe(4);
    expect(await page.locator('.kw-chart').count()).toBe(5 * 4 + 1 + 2 * 2);
    expect(await page.locator('[data-testid="heat-separation"] .kw-chart').count()).toBe(2);
    expect(await page.getByTestId('heat-separation').textContent()).toContain('Freeze-thaw cycles');
    // the fitted lines say what they found, B's with its bound meeting the limit; the keys name the initial test
    const fitNotes = page.locator('[data-testid="measured-ph"] [data-testid="fit-notes"]');
    expect(await fitNotes.count()).toBe(1);
    expect(await fitNotes.textContent()).toMatch(/B: Variant B:.*lower limit 5\.0/);
    expect(await page.getByTestId('measured-ph').locator('.keys').textContent()).toContain('Initial: the initial test');
    expect(await page.getByTestId('measured-ph').textContent()).not.toContain('Day 0');
    expect(await page.locator('[data-testid="delta-e"] .kw-chart').count()).toBe(1);
    // MKT beside the oven's chart, a note where there is no log
    const ovenPanel = page.locator('[data-testid="measured-ph"] .panel').filter({ hasText: '45 °C' });
    expect(await ovenPanel.locator('.mkt').textContent()).toMatch(/^MKT 4\d\.\d\d °C from 2,160 readings$/);
    expect(await page.getByTestId('conditions').textContent()).toContain('No chamber log for the study period');

    // failing results are listed, not only drawn
    const viscFails = page.locator('[data-testid="measured-viscosity"] [data-testid="failing-list"]');
    expect(await viscFails.textContent()).toMatch(/results? fails? the criterion/);
    expect(await viscFails.textContent()).toContain('Week 12');

    // a suggested shelf life per variant with its reasons table, basis, label dating and caution
    for (const code of ['A', 'B']) {
      const card = page.getByTestId(`suggestion-${code}`);
      expect(await card.getByTestId('suggested-months').textContent()).toMatch(/^(\d+ months?|Not enough data yet|Too early to tell|Under 1 month)$/);
      // the reasons that give a figure or a flag first; all of them one click away
      const shown = await card.getByTestId('reasons-table').locator('tbody tr').count();
      expect(shown).toBeGreaterThanOrEqual(3);
      await card.getByTestId('reasons-toggle').click();
      expect(await card.getByTestId('reasons-table').locator('tbody tr').count()).toBeGreaterThan(shown);
      if (code === 'A') await card.getByTestId('reasons-toggle').click();
      expect(await card.getByTestId('caution').textContent()).toContain('qualified safety assessor');
    }
    const b = page.getByTestId('suggestion-B');
    expect(await b.getByTestId('gates').textContent()).toContain('Label: Protect from freezing.');
    expect(await b.textContent()).toContain('Regulation 1223/2009');
    expect(await b.locator('tr.governs').count()).toBe(1);
    expect(await page.getByTestId('q10-note').textContent()).toContain('rule of thumb, not a prediction');
    await noBadNumbers(page);

    await page.screenshot({ path: join(SHOTS, 'analysis-desktop-full.png'), fullPage: true });
    // a laptop and a landscape tablet: the page never scrolls sideways; the pH charts looked at closely
    for (const [size, name] of [
      [LAPTOP, 'laptop-1280'],
      [TABLET_LANDSCAPE, 'tablet-1024'],
    ] as const) {
      await page.setViewportSize(size);
      await page.evaluate(() => window.scrollTo(0, 0));
      await chartsSettled(page);
      expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth), name).toBe(true);
      await page.screenshot({ path: join(SHOTS, `analysis-${name}.png`) });
      await shot(page, 'measured-ph', `analysis-ph-${name}.png`);
    }
    await page.setViewportSize(VIEWPORTS.desktop);
    await chartsSettled(page);
    await shot(page, 'suggestion-B', 'analysis-reasons-table.png');
    await shot(page, 'heat-separation', 'analysis-heat-grid.png');
    await shot(page, 'measured-ph', 'analysis-ph-chart.png');
    await shot(page, 'delta-e', 'analysis-color-difference.png');

    // Q10: the server's field error beside the field, then a new figure with Q10 = 3
    const monthsB2 = await b.getByTestId('suggested-months').textContent();
    await page.locator('[data-testid="q10-form"] input').fill('0');
    await page.getByTestId('q10-apply').click();
    await expect.poll(() => page.getByTestId('q10-form').locator('.el-form-item__error').textContent()).toContain('Q10 must be more than 0');
    await page.locator('[data-testid="q10-form"] input').fill('abc');
    await page.getByTestId('q10-apply').click();
    await expect.poll(() => page.getByTestId('q10-form').locator('.el-form-item__error').textContent()).toContain('Enter a number');
    await page.locator('[data-testid="q10-form"] input').fill('3');
    await page.getByTestId('q10-apply').click();
    await expect.poll(() => page.getByTestId('q10-note').textContent()).toMatch(/Q10 = 3 \(the lab's default is 2\)/);
    await expect.poll(() => page.getByTestId('q10-form').locator('.el-form-item__error').count()).toBe(0);
    // B's figure comes from its 45 °C projection (Q10 = 2: 4 weeks x 4 = 3.68 months -> 3); with Q10 = 3 the
    // projection gives 0.92 x 9 = 8.28 months and B's 25 °C pH regression (5.32 months) governs instead
    expect(monthsB2).toBe('3 months');
    await expect.poll(() => b.getByTestId('suggested-months').textContent()).toBe('5 months');
    expect(await b.locator('tr.governs').textContent()).toContain('Regression (ICH Q1E)');

    // CSV of one chart, built in the browser
    const [download] = await Promise.all([
      page.waitForEvent('download'),
      page.locator('[data-testid="measured-ph"] [data-testid="csv-button"]').first().click(),
    ]);
    expect(download.suggestedFilename()).toMatch(/^keepwell-study-\d+-ph-4-c-control-\d+\.csv$/);
    const csv = readFileSync((await download.path())!, 'utf8');
    expect(csv.split('\r\n')[0]).toBe('\uFEFFAttribute,Unit,Variant,Lot,Condition,Checkpoint,Months,Due date,Sample,Value,Verdict,Lower limit,Upper limit');
    // 2 variants x 2 samples x 9 points: the initial test (t = 0), Weeks 1, 2, 4, 8, 12 and the control
    // readings paired with the freeze-thaw cycles (days 2, 4 and 6: 24 h low + 24 h high per cycle)
    const fridgeCps = study.checkpoints.filter((c) => c.studyConditionId === study.conditions[0].id).sort((x, y) => x.dueDate.localeCompare(y.dueDate));
    expect(fridgeCps.map((c) => c.label)).toEqual(['Day 2', 'Day 4', 'Day 6', 'Week 1', 'Week 2', 'Week 4', 'Week 8', 'Week 12']);
    expect(csv.trim().split('\r\n')).toHaveLength(1 + 2 * 2 * 9);
    expect(csv).toMatch(/,Initial,0(\.0+)?,/);

    // group by variant: a panel per variant
    await page.getByTestId('grouping').getByText('A chart per variant').click();
    await page.waitForURL(/group=variant/);
    await expect.poll(() => page.locator('[data-testid="measured-ph"] .panel').count()).toBe(2);
    await chartsSettled(page);
    await shot(page, 'measured-ph', 'analysis-ph-by-variant.png');

    // on to the comparison
    await page.getByTestId('compare-link').click();
    await page.waitForURL(/\/compare/);
    await page.waitForSelector('[data-testid="compare-matrix"]');
    // the one console error is the browser's note of the deliberate Q10 = 0 answered 400
    expect(problems).toEqual(['console: Failed to load resource: the server responded with a status of 400 (Bad Request)']);
    await page.close();
  });

  it('keeps a 10 000-point chart responsive: sampled, no symbols, no animation', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signedIn(page, DEMO.formulator);
    const real = (await formulator.get(`/api/studies/${study.id}/analysis`)).body.analysis;
    const ph = real.attributes.find((x: { code: string }) => x.code === 'ph').id;
    const roomId = study.conditions.find((c) => c.role === 'real_time')!.id;
    const n = 10_000;
    const big = {
      ...real,
      // pH alone, one invented series of 10 000 readings at 25 °C (as a data logger might give)
      attributes: real.attributes.filter((x: { id: number }) => x.id === ph),
      series: [
        {
          studyAttributeId: ph,
          variantId: real.variants[0].id,
          batchId: cat.batchIds[0],
          lotCode: real.variants[0].lots[0],
          studyConditionId: roomId,
          points: Array.from({ length: n }, (_, i) => ({
            checkpointId: i + 1,
            label: `Reading ${i + 1}`,
            months: (i / n) * 24,
            dueDate: today,
            value: Math.round((5.5 - 0.01 * (i / n) * 24 + 0.05 * Math.sin(i / 40)) * 1000) / 1000,
            verdict: 'pass',
            sampleCode: 'LOG-1',
          })),
        },
      ],
      deltaE: [],
      regressions: [],
    };
    await page.route(`**/api/studies/${study.id}/analysis`, (route) => route.fulfill({ status: 200, contentType: 'application/json', body: JSON.stringify({ analysis: big }) }));
    const t0 = Date.now();
    await page.goto(`${rig.baseUrl}/studies/${study.id}/analysis`);
    await chartsSettled(page);
    const ms = Date.now() - t0 - 400;
    const panel = page.locator('[data-testid="measured-ph"] .panel').filter({ hasText: '25 °C' });
    expect(await panel.textContent()).toContain('10,000 readings: lines sampled, symbols off');
    // a hover answers quickly with 10 000 points on the canvas
    const box = (await panel.locator('canvas').first().boundingBox())!;
    const h0 = Date.now();
    for (let i = 0; i < 20; i++) await page.mouse.move(box.x + 60 + i * 20, box.y + box.height / 2);
    const hoverMs = (Date.now() - h0) / 20;
    console.info(`10 000-point chart: drawn ${ms} ms after navigation; ${hoverMs.toFixed(1)} ms per pointer move`);
    await panel.screenshot({ path: join(SHOTS, 'analysis-10000-points.png') });
    expect(problems).toEqual([]);
    await page.close();
  });

  it("shows the engine's notes: a batch left out and why, the fit-alone figure beside, a check-the-data warning", async () => {
    const page = await rig.browser.newPage({ viewport: LAPTOP });
    const problems = watchPage(page);
    await signedIn(page, DEMO.formulator);
    const real = (await formulator.get(`/api/studies/${study.id}/analysis`)).body.analysis;
    const ph = real.attributes.find((x: { code: string }) => x.code === 'ph');
    const room = study.conditions.find((c) => c.role === 'real_time')!;
    const b = real.variants.find((v: { code: string }) => v.code === 'B');
    // what shelfLifeMultiBatch gives for a new lot with its initial reading only and batches fitted in one model
    // (worded as shared/compute/shelf-life.ts words them), put on B's pH at 25 °C
    const excluded = [{ batch: 'T1-B2', reason: 'results at one time only (0 months): left out of the fit until it has results at 2 or more times; its readings stay on the chart' }];
    const alternative = { separateFit: 'each_alone', months: 6.1, status: 'crossed', governingBatch: 'T1-B', message: 'Each batch fitted alone (own residual SD, n - 2 df): 6.10 months, batch T1-B governs.' };
    const warning = 'The results lie exactly on a straight line (no residual spread), so the confidence bound is the line itself: check the data.';
    const tail = ` Left out: batch ${excluded.map((e) => `${e.batch} (${e.reason})`).join('; ')}.`;
    for (const r of real.regressions) {
      if (r.variantId === b.id && r.studyAttributeId === ph.id && r.studyConditionId === room.id) Object.assign(r, { message: `${r.message}${tail}`, excluded, alternative, warning });
    }
    for (const reason of real.suggestions.find((x: { variantId: number }) => x.variantId === b.id).result.reasons) {
      if (reason.method === 'regression' && reason.attribute === 'pH') reason.message = `${reason.message}${tail} ${warning} Beside it: ${alternative.message}`;
    }
    await page.route(`**/api/studies/${study.id}/analysis`, (route) => route.fulfill({ status: 200, contentType: 'application/json', body: JSON.stringify({ analysis: real }) }));
    await page.goto(`${rig.baseUrl}/studies/${study.id}/analysis`);
    await chartsSettled(page);
    const panel = page.locator('[data-testid="measured-ph"] .panel').filter({ hasText: room.name });
    expect(await panel.getByTestId('fit-warning').textContent()).toContain('Check the data.');
    expect(await panel.getByTestId('fit-excluded').textContent()).toContain('Batch T1-B2 left out: results at one time only');
    expect(await panel.getByTestId('fit-alternative').textContent()).toContain('Beside it: Each batch fitted alone');
    // the fit's own message no longer carries the batches left out (they are listed apart)
    expect(await panel.getByTestId('fit-notes').textContent()).not.toContain('Left out: batch');
    const card = page.getByTestId('suggestion-B');
    expect(await card.getByTestId('reason-warning').first().textContent()).toContain('Check the data.');
    expect(await card.getByTestId('reason-excluded').first().textContent()).toContain('Batch T1-B2 left out');
    expect(await card.getByTestId('reason-alternative').first().textContent()).toContain('6.10 months');
    expect(await card.getByTestId('reasons-table').textContent()).not.toContain('Left out: batch');
    await page.addStyleTag({ content: 'header.bar { position: static !important; }' });
    await panel.scrollIntoViewIfNeeded();
    await panel.screenshot({ path: join(SHOTS, 'analysis-fit-notes.png') });
    const row = card.getByTestId('reasons-table').locator('tr').filter({ has: page.getByTestId('reason-warning') }).first();
    await row.scrollIntoViewIfNeeded();
    await row.screenshot({ path: join(SHOTS, 'analysis-reason-notes.png') });
    expect(problems).toEqual([]);
    await page.close();
  });

  it('is not offered to technicians', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    await signedIn(page, DEMO.technician);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/analysis`);
    await page.waitForURL(/\/not-allowed/);
    // The page says which roles may open it (the route's minRole), not always "the owner".
    expect(await page.getByTestId('not-allowed-roles').textContent()).toContain("Analysis is open to formulators and the lab's owner");
    await page.close();
  });
});

describe('Compare page', () => {
  it('shows every attribute at every condition, the first failures and each shelf life for two variants', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signedIn(page, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/compare`);
    const matrix = page.getByTestId('compare-matrix');
    await matrix.waitFor();
    const oven = study.conditions.find((c) => c.role === 'accelerated')!.id;
    const ft = study.conditions.find((c) => c.role === 'stress')!.id;
    // 7 attributes as rows; 4 conditions x 2 variants as columns
    expect(await matrix.locator('tbody tr').count()).toBe(7);
    expect(await matrix.locator('tbody tr').first().locator('td').count()).toBe(4 * 2);
    const shelf = await page.getByTestId('compare-shelf-life').textContent();
    expect(shelf).toMatch(/A: Variant A\s*\d+ months?/);
    expect(shelf).toContain('Label: Protect from freezing.');
    expect(await page.getByTestId(`first-failure-${oven}-A`).textContent()).toContain('None so far');
    expect(await page.getByTestId(`first-failure-${oven}-B`).textContent()).toMatch(/Week 8 \(1\.84 months\): .*Separation/);
    expect(await page.getByTestId(`first-failure-${ft}-B`).textContent()).toMatch(/^\s*Cycle 3: Separation\s*$/);
    const sep = (await page.getByTestId(`cell-${oven}-separation-B`).textContent()) ?? '';
    expect(sep).toMatch(/3 Visible layer\s*Fail\s*since Week 8/);
    expect(await page.getByTestId(`cell-${oven}-separation-A`).textContent()).toMatch(/0 None\s*Pass/);
    expect(await page.getByTestId(`compare-condition-${oven}`).textContent()).toMatch(/MKT 4\d\.\d\d °C/);
    await page.evaluate(() => document.fonts.ready);
    await page.screenshot({ path: join(SHOTS, 'compare-desktop.png') });
    // one screen at 1440 x 900
    const bottom = await matrix.evaluate((el) => el.getBoundingClientRect().bottom);
    console.info(`comparison matrix ends at ${Math.round(bottom)} px`);
    expect(bottom).toBeLessThanOrEqual(900);
    const text = await page.locator('.compare-page').innerText();
    expect(text).not.toMatch(/\bNaN\b|\bundefined\b|Infinity/);
    // On a tablet the matrix scrolls inside its card, shaded at the edge where more columns wait, with the
    // attribute column kept; the page itself does not scroll sideways.
    await page.setViewportSize(VIEWPORTS.tablet);
    await expect.poll(() => page.locator('.matrix-wrap .scroll-x').getAttribute('data-more-right')).toBe('true');
    expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    expect(await matrix.locator('tbody th.attr').first().evaluate((el) => getComputedStyle(el).position)).toBe('sticky');
    await page.screenshot({ path: join(SHOTS, 'compare-tablet.png') });
    expect(problems).toEqual([]);
    await page.close();
  });

  it('compares the variants at a checkpoint the user picks, and over time, at laptop and tablet sizes', async () => {
    const page = await rig.browser.newPage({ viewport: LAPTOP });
    const problems = watchPage(page);
    await signedIn(page, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/compare`);
    const matrix = page.getByTestId('compare-matrix');
    await matrix.waitFor();
    const oven = study.conditions.find((c) => c.role === 'accelerated')!.id;
    await page.evaluate(() => document.fonts.ready);
    await page.screenshot({ path: join(SHOTS, 'compare-laptop-1280.png') });
    // latest: B separated at 45 °C (since week 8)
    expect(await page.getByTestId(`cell-${oven}-separation-B`).textContent()).toMatch(/3 Visible layer\s*Fail/);

    // as of week 4 B had only a faint sheen there and nothing had failed yet
    await page.getByTestId('checkpoint-picker').click();
    await page.locator('.el-select-dropdown__item:visible', { hasText: /^Week 4$/ }).click();
    await page.waitForURL(/at=Week/);
    await expect.poll(() => page.getByTestId(`cell-${oven}-separation-B`).textContent()).toMatch(/1 Faint oil sheen\s*Pass/);
    expect(await page.getByTestId(`compare-condition-${oven}`).textContent()).toContain('at Week 4');
    expect(await page.getByTestId(`first-failure-${oven}-B`).textContent()).toContain('None so far');
    // freeze-thaw was done by then: its cycles stay on their own list, the cells show the latest cycle
    const ft = study.conditions.find((c) => c.role === 'stress')!.id;
    expect(await page.getByTestId(`compare-condition-${ft}`).textContent()).toContain('at Cycle 3, the latest by Week 4');
    expect(await page.getByTestId(`cell-${ft}-separation-B`).textContent()).toMatch(/2 Oil droplets on surface\s*Fail/);

    // over time: the pH of both variants, a chart per condition (freeze-thaw against cycles), each variant in its color and marker
    const over = page.getByTestId('compare-over-time');
    await over.scrollIntoViewIfNeeded();
    await over.locator('.kw-chart canvas').first().waitFor();
    await chartsSettled(page);
    expect(await over.locator('.kw-chart').count()).toBe(4);
    await page.addStyleTag({ content: 'header.bar { position: static !important; }' });
    await over.screenshot({ path: join(SHOTS, 'compare-over-time-laptop-1280.png') });
    // a graded attribute over time: its heat grids, for the picked variants only
    await page.getByTestId('over-time-attribute').click();
    await page.locator('.el-select-dropdown__item:visible', { hasText: /^Separation$/ }).click();
    await page.waitForURL(/attr=separation/);
    await expect.poll(() => over.locator('[data-testid="heat-separation"] .kw-chart').count()).toBe(2);

    await page.setViewportSize(TABLET_LANDSCAPE);
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.waitForTimeout(300);
    expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    await page.screenshot({ path: join(SHOTS, 'compare-tablet-1024.png') });
    await page.screenshot({ path: join(SHOTS, 'compare-tablet-1024-full.png'), fullPage: true });
    expect(problems).toEqual([]);
    await page.close();
  });
});

describe('Chamber log chart', () => {
  it('draws temperature and relative humidity in colors of their own, each value axis and the time axis titled', async () => {
    // a year before the study, so no MKT above changes: hourly temperature and RH of the 25 °C / 60 % RH cabinet
    const from = addDays(today, -500);
    const t0 = Date.parse(`${from}T00:00:00Z`);
    const lines = ['Timestamp,Temp (°C),RH (%)'];
    for (let i = 0; i < 72; i++) {
      lines.push(`${new Date(t0 + i * 3_600_000).toISOString().replace('.000Z', 'Z')},${(25 + 0.6 * Math.sin(i / 7)).toFixed(2)},${(60 + 3 * Math.cos(i / 9)).toFixed(1)}`);
    }
    const res = await formulator.agent
      .post(`/api/storage-conditions/${cat.conditions.room}/logs`)
      .set('X-Keepwell-Request', '1')
      .attach('file', Buffer.from(`${lines.join('\n')}\n`, 'utf8'), 'cabinet-rh.csv');
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    const page = await rig.browser.newPage({ viewport: LAPTOP });
    const problems = watchPage(page);
    await signedIn(page, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/storage/logs/${res.body.log.id}`);
    const chart = page.getByTestId('log-chart');
    await chart.locator('canvas').first().waitFor();
    await page.evaluate(() => document.fonts.ready);
    await page.waitForTimeout(800);
    expect(await page.locator('#chart-title').textContent()).toContain('Temperature and relative humidity');
    await page.addStyleTag({ content: 'header.bar { position: static !important; }' });
    await page.locator('.chart-card').screenshot({ path: join(SHOTS, 'storage-chamber-log-rh-laptop-1280.png') });
    expect(problems).toEqual([]);
    await page.close();
  });
});
