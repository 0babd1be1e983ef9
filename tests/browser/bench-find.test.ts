/**
 * Issue 20 at the bench, in headless Chromium at phone (390 x 844), tablet (1024 x 768) and desktop
 * sizes: a typed (or scanner-typed) sample code opens Record at its due checkpoint, with the first
 * attribute in view on arrival, choice buttons whose words stay whole (checked on the rendered
 * text), a one-row save bar and the initial test's method offered again; an unknown code or another
 * lab's says so; the counts filter the list (aria-pressed) and "My studies" is remembered; the
 * navigation shows "More" when a tab is off-screen. Studies made through the API; invented data.
 */
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext, Page } from 'playwright-core';
import { addDays } from '../../shared/compute/schedule';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import { DEMO, type Client } from '../helpers/app';
import { SHOTS, VIEWPORTS, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, type Catalogue } from '../helpers/fixtures';

const SIZES = {
  phone: { width: 390, height: 844 },
  tablet: { width: 1024, height: 768 },
  desktop: VIEWPORTS.desktop,
} as const;
type SizeName = keyof typeof SIZES;

let rig: BrowserRig;
let formulator: Client;
let technician: Client;
let cat: Catalogue;
let study: StudyDetail;
let otherStudy: StudyDetail;
let today: string;

const attr = (code: string) => study.attributes.find((a) => a.code === code)!.id;
const ovenSamples = () => study.samples.filter((s) => s.studyConditionId === study.conditions[1].id).sort((a, b) => a.labelOrder - b.labelOrder);
const week1 = () => study.checkpoints.find((c) => c.label === 'Week 1' && c.studyConditionId === study.conditions[1].id)!;

async function startStudy(plan: object): Promise<StudyDetail> {
  const created = await formulator.post('/api/studies', plan);
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  const started = await formulator.post(`/api/studies/${created.body.study.id}/start`);
  expect(started.status, JSON.stringify(started.body)).toBe(200);
  return started.body.study;
}

beforeAll(async () => {
  rig = await startBrowserRig();
  formulator = await rig.t.signIn(DEMO.formulator);
  technician = await rig.t.signIn(DEMO.technician);
  cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Rosehip night cream with a long product name');
  today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  const base = {
    productId: cat.productId,
    startDate: addDays(today, -7),
    batchIds: cat.batchIds,
    samplesPerCell: 1,
    containerDescription: '60 mL airless pump',
    fillGrams: 50,
  };
  // Started 7 days ago: Week 1 is due today, the fridge's Day 10 in three days. The technician and the formulator are responsible.
  study = await startStudy({
    ...base,
    title: 'Rosehip night cream, bench on a phone',
    conditions: [
      { conditionId: cat.conditions.fridge, role: 'control', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'day', n: 10 }, { unit: 'week', n: 4 }] },
      { conditionId: cat.conditions.oven45, role: 'accelerated', template: null, offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] },
    ],
    attributes: [
      { attributeId: cat.attributeIds.separation, criterion: { kind: 'worst_grade', grade: 1 } },
      { attributeId: cat.attributeIds.odor, criterion: { kind: 'worst_compared', level: 'slight' } },
      { attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } },
      { attributeId: cat.attributeIds.pack_integrity, criterion: { kind: 'must_pass' } },
    ],
    responsibleIds: [rig.t.labs[0].members[DEMO.technician], rig.t.labs[0].members[DEMO.formulator]],
  });
  // A study only the formulator is responsible for; its initial test is due today (the 25 °C cabinet).
  otherStudy = await startStudy({
    ...base,
    startDate: today,
    title: 'Rosehip night cream, room temperature',
    conditions: [{ conditionId: cat.conditions.room, role: 'control', template: null, offsets: [{ unit: 'month', n: 3 }] }],
    attributes: [{ attributeId: cat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } }],
    responsibleIds: [rig.t.labs[0].members[DEMO.formulator]],
  });
  // The initial test of the first study, recorded on time: pH read on a 10 % dispersion (invented values).
  const initial = study.checkpoints.find((c) => c.kind === 'initial')!;
  for (const s of study.samples.filter((x) => x.studyConditionId == null)) {
    const res = await technician.put(`/api/samples/${s.code}/checkpoints/${initial.id}/observations`, {
      entries: [
        { studyAttributeId: attr('separation'), value: 0 },
        { studyAttributeId: attr('odor'), value: 'no_change' },
        { studyAttributeId: attr('ph'), value: 5.6, method: { method: '10 % dispersion in water' } },
        { studyAttributeId: attr('pack_integrity'), value: true },
      ],
    });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
  }
}, 120_000);
afterAll(async () => rig?.close());

async function settle(page: Page) {
  await page.evaluate(() => document.fonts.ready);
  await page.waitForTimeout(300);
}

async function open(size: SizeName, email: string = DEMO.technician): Promise<{ context: BrowserContext; page: Page; problems: string[] }> {
  const context = await rig.browser.newContext({ viewport: SIZES[size], hasTouch: size !== 'desktop' });
  const page = await context.newPage();
  const problems = watchPage(page);
  await signInSettled(page, rig.baseUrl, email);
  return { context, page, problems };
}

/** Types into "Find a sample" and presses Enter, as a hand-held scanner does. */
async function findSample(page: Page, text: string) {
  const input = page.getByTestId('find-sample-input');
  await input.fill(text);
  await input.press('Enter');
}

/**
 * Words broken inside themselves on the choice buttons: for each word of each button's text, the
 * rectangles its rendered glyphs take; a word split over two lines has two at different heights.
 * Also a button whose text runs out of its box.
 */
async function brokenWords(page: Page): Promise<string[]> {
  return page.evaluate(() => {
    const out: string[] = [];
    for (const button of document.querySelectorAll<HTMLElement>('.choice')) {
      const r = button.getBoundingClientRect();
      if (!r.width) continue;
      if (button.scrollWidth > button.clientWidth + 1) out.push(`"${button.textContent?.trim()}" overflows its button`);
      for (const text of button.querySelectorAll('.text')) {
        const node = text.firstChild;
        if (!node || node.nodeType !== Node.TEXT_NODE) continue;
        const s = node.textContent ?? '';
        for (const m of s.matchAll(/\S+/g)) {
          const range = document.createRange();
          range.setStart(node, m.index!);
          range.setEnd(node, m.index! + m[0].length);
          const tops = new Set([...range.getClientRects()].filter((x) => x.width > 0).map((x) => Math.round(x.top)));
          if (tops.size > 1) out.push(`"${m[0]}" is broken over ${tops.size} lines`);
        }
      }
    }
    return out;
  });
}

/** Where the first attribute card's heading and first input are, against the space between the app bar and the save bar. */
async function firstAttributeInView(page: Page) {
  return page.evaluate(() => {
    const bar = document.querySelector('.shell > header')!.getBoundingClientRect();
    const save = document.querySelector('[data-testid="savebar"]')!.getBoundingClientRect();
    const card = document.querySelector<HTMLElement>('[data-testid^="attr-"]')!;
    const head = card.querySelector('h3')!.getBoundingClientRect();
    const control = card.querySelector('button.choice, input, textarea')!.getBoundingClientRect();
    const bottom = Math.min(window.innerHeight, save.top);
    return {
      top: Math.max(0, bar.bottom),
      bottom,
      headTop: head.top,
      controlBottom: control.bottom,
      inView: head.top >= Math.max(0, bar.bottom) && control.bottom <= bottom,
    };
  });
}

describe('Find a sample', () => {
  for (const size of ['phone', 'tablet'] as const) {
    it(`at ${size} size: a typed code opens Record at its due checkpoint, the first attribute in view, words whole, one-row save bar`, async () => {
      const { context, page, problems } = await open(size);
      await page.waitForSelector(`[data-testid="bench-checkpoint-${week1().id}"]`);
      await settle(page);
      await page.screenshot({ path: join(SHOTS, `bench-${size}.png`) });

      const sample = ovenSamples()[0];
      await findSample(page, sample.code.toLowerCase());
      await page.waitForURL(new RegExp(`/samples/${sample.code}/checkpoints/${week1().id}$`));
      await expect.poll(() => page.getByTestId('record-sample-code').textContent()).toBe(sample.code);
      await page.waitForSelector('[data-testid^="attr-"]');
      await settle(page);
      await page.screenshot({ path: join(SHOTS, `record-${size}.png`) });
      const where = await firstAttributeInView(page);
      expect(where.inView, JSON.stringify(where)).toBe(true);

      // Choice buttons: no word broken inside itself, at this size and at the narrowest phone.
      expect(await page.locator('.choice').count()).toBeGreaterThan(8);
      expect(await brokenWords(page)).toEqual([]);

      // The save bar keeps to one row.
      const bar = (await page.getByTestId('savebar').boundingBox())!;
      expect(bar.height).toBeLessThan(90);
      const tops = await page.getByTestId('savebar').locator('.el-button').evaluateAll((els) => els.map((e) => Math.round(e.getBoundingClientRect().top)));
      expect(new Set(tops).size).toBe(1);

      // The method of the initial test (pH on a 10 % dispersion) is offered again.
      const method = page.getByTestId('attr-ph').getByTestId('method-method');
      expect(await method.locator('[aria-checked="true"]').textContent()).toContain('10 % dispersion in water');

      // The sample page: the study's container as the pack; Week 1 due for this sample.
      await page.getByTestId('record-sample-link').click();
      await page.waitForURL(new RegExp(`/samples/${sample.code}$`));
      await expect.poll(() => page.getByTestId('sample-pack').textContent()).toBe('60 mL airless pump');
      expect(await page.getByTestId('record-entry-title').textContent()).toBe('Week 1 is due');
      await settle(page);
      await page.screenshot({ path: join(SHOTS, `sample-${size}.png`) });
      expect(problems).toEqual([]);
      await context.close();
    });
  }

  it("a scanned label URL opens the same; an unknown code and another lab's sample say so plainly", async () => {
    const { context, page, problems } = await open('phone');
    const sample = ovenSamples()[1];
    await findSample(page, `${rig.baseUrl}/samples/${sample.code}`);
    await page.waitForURL(new RegExp(`/samples/${sample.code}/checkpoints/${week1().id}$`));
    await page.waitForSelector('[data-testid^="attr-"]');
    await page.waitForLoadState('networkidle');
    await page.goto(`${rig.baseUrl}/bench`);
    await page.waitForLoadState('networkidle');

    await findSample(page, 'ZZZZ99');
    await expect.poll(() => page.getByTestId('find-sample-problem').textContent()).toBe('No sample ZZZZ99 in your lab. Check the code on the label.');
    expect(page.url()).toMatch(/\/bench$/);

    const otherOwner = await rig.t.signIn(DEMO.otherOwner);
    const otherCat = await makeCatalogue(rig.t.db, rig.t.labs[1].id, 'Other lab cream');
    const made = await otherOwner.post('/api/studies', {
      productId: otherCat.productId,
      title: 'Other lab study',
      startDate: today,
      batchIds: otherCat.batchIds,
      conditions: [{ conditionId: otherCat.conditions.oven45, role: 'accelerated', template: null, offsets: [{ unit: 'week', n: 1 }] }],
      attributes: [{ attributeId: otherCat.attributeIds.ph, criterion: { kind: 'change_abs', max: 0.5 } }],
      samplesPerCell: 1,
      containerDescription: '',
    });
    expect(made.status, JSON.stringify(made.body)).toBe(201);
    const theirs = (await otherOwner.post(`/api/studies/${made.body.study.id}/start`)).body.study as StudyDetail;
    await findSample(page, theirs.samples[0].code);
    await expect.poll(() => page.getByTestId('find-sample-problem').textContent()).toBe(`No sample ${theirs.samples[0].code} in your lab. Check the code on the label.`);

    await findSample(page, 'not a code!');
    await expect.poll(() => page.getByTestId('find-sample-problem').textContent()).toContain('is not a sample code');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'bench-find-unknown-phone.png') });
    // The two 404 answers are logged by the browser as failed loads; nothing else.
    expect(problems.filter((p) => !/404/.test(p))).toEqual([]);
    await context.close();
  });
});

describe('Bench filters', () => {
  it('a tapped count shows only that work (aria-pressed); "My studies" shows the studies one is responsible for and is remembered', async () => {
    const { context, page, problems } = await open('tablet');
    const cards = page.locator('[data-testid^="bench-checkpoint-"]');
    await page.waitForSelector(`[data-testid="bench-checkpoint-${week1().id}"]`);
    const all = await cards.count();
    const states = async () => cards.evaluateAll((els) => els.map((e) => e.getAttribute('data-state')));
    expect(new Set(await states()).size).toBeGreaterThan(1);

    const due = page.getByTestId('count-due');
    expect(await due.getAttribute('aria-pressed')).toBe('false');
    await due.click();
    expect(await due.getAttribute('aria-pressed')).toBe('true');
    expect(new Set(await states())).toEqual(new Set(['due']));
    await page.getByTestId('count-upcoming').click();
    expect(await due.getAttribute('aria-pressed')).toBe('false');
    expect(new Set(await states())).toEqual(new Set(['upcoming']));
    await page.getByTestId('count-upcoming').click();
    await expect.poll(() => cards.count()).toBe(all);

    // The room-temperature study is the formulator's alone: "My studies" hides it for the technician.
    const theirs = otherStudy.checkpoints.find((c) => c.kind === 'initial')!;
    expect(await page.getByTestId(`bench-checkpoint-${theirs.id}`).count()).toBe(1);
    const mine = page.getByTestId('bench-mine');
    await mine.click();
    expect(await mine.getAttribute('aria-pressed')).toBe('true');
    await expect.poll(() => page.getByTestId(`bench-checkpoint-${theirs.id}`).count()).toBe(0);
    expect(await page.getByTestId(`bench-checkpoint-${week1().id}`).count()).toBe(1);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'bench-my-studies-tablet.png') });
    await page.reload();
    await page.waitForSelector(`[data-testid="bench-checkpoint-${week1().id}"]`);
    expect(await page.getByTestId('bench-mine').getAttribute('aria-pressed')).toBe('true');
    expect(await page.getByTestId(`bench-checkpoint-${theirs.id}`).count()).toBe(0);
    await page.getByTestId('bench-mine').click();
    await expect.poll(() => page.getByTestId(`bench-checkpoint-${theirs.id}`).count()).toBe(1);
    expect(problems).toEqual([]);
    await context.close();
  });
});

describe('At phone size', () => {
  it('the navigation says "More" while a tab is off-screen, and goes there', async () => {
    const { context, page, problems } = await open('phone', DEMO.owner);
    const more = page.getByTestId('nav-more');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'nav-more-phone.png') });
    await expect.poll(() => more.isVisible()).toBe(true);
    const inView = () =>
      page.getByTestId('nav-lab').evaluate((el) => {
        const r = el.getBoundingClientRect();
        return r.left >= 0 && r.right <= window.innerWidth;
      });
    expect(await inView()).toBe(false);
    // Each tap scrolls the tabs by most of the bar's width, until the last is in view and "More" goes.
    for (let i = 0; i < 5 && (await more.count()); i++) {
      await more.click();
      await page.waitForTimeout(500);
    }
    expect(await inView()).toBe(true);
    expect(await more.count()).toBe(0);
    expect(await page.getByTestId('nav-more-left').isVisible()).toBe(true);
    await page.screenshot({ path: join(SHOTS, 'nav-more-phone-end.png') });
    expect(problems).toEqual([]);
    await context.close();
  });
});

describe('Screenshots at desktop size', () => {
  it('Bench, Record and the sample page', async () => {
    const { context, page, problems } = await open('desktop');
    await page.waitForSelector(`[data-testid="bench-checkpoint-${week1().id}"]`);
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'bench-desktop.png') });
    const sample = ovenSamples()[0];
    await findSample(page, sample.code);
    await page.waitForURL(new RegExp(`/samples/${sample.code}/checkpoints/${week1().id}$`));
    await page.waitForSelector('[data-testid^="attr-"]');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'record-desktop.png') });
    const where = await firstAttributeInView(page);
    expect(where.inView, JSON.stringify(where)).toBe(true);
    expect(await brokenWords(page)).toEqual([]);
    await page.goto(`${rig.baseUrl}/samples/${sample.code}`);
    await page.waitForSelector('[data-testid="sample-pack"]');
    await settle(page);
    await page.screenshot({ path: join(SHOTS, 'sample-desktop.png') });
    expect(problems).toEqual([]);
    await context.close();
  });
});
