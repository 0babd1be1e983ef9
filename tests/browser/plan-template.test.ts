/**
 * Plans from templates (issue #20): the plan builder ticks the checks of the product's type; a
 * formulator saves a plan as a whole-study template and starts a new study from it (at tablet and
 * phone sizes), then copies that study for the next one. Also the attribute sets on the library
 * page, a batch's raw-material lots and its printable sheet. Screenshots at desktop, tablet (1024 x 768) and phone (390 x 844)
 * go to test-results/screenshots. Invented lab data.
 */
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { DEMO, type Client } from '../helpers/app';
import { SHOTS, VIEWPORTS, axeViolations, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';

const TABLET = { width: 1024, height: 768 };
const PHONE = { width: 390, height: 844 };

let rig: BrowserRig;
let formulator: Client;
let timeZone: string;
const balm = { productId: 0, name: 'Shea lip balm', batchIds: [] as number[] };
let oven: number;
let fridge: number;
let templateId: number;
let studyId: number;

async function ok<T = Record<string, unknown>>(p: PromiseLike<{ status: number; body: unknown }>, status = 200): Promise<T> {
  const res = await p;
  expect(res.status, JSON.stringify(res.body)).toBe(status);
  return res.body as T;
}

function input(page: Page, testId: string) {
  return page.locator(`input[data-testid="${testId}"], [data-testid="${testId}"] input`).first();
}

async function choose(page: Page, selectTestId: string, option: string, exact = true) {
  await page.getByTestId(selectTestId).click();
  await page.getByRole('option', { name: option, exact }).click();
  await expect.poll(() => page.locator('.el-select__popper:visible').count()).toBe(0);
}

/** WCAG 2.1 A/AA violations inside one part of the page (axe-core, as the other browser tests run it). */
async function axeIn(page: Page, selector: string): Promise<string[]> {
  await axeViolations(page); // loads the engine into the page
  return page.evaluate(async (sel) => {
    const axe = (window as unknown as { axe: { run: (c: unknown, o: unknown) => Promise<{ violations: { id: string; nodes: { target: unknown[] }[] }[] }> } }).axe;
    const r = await axe.run({ include: [[sel]] }, { runOnly: { type: 'tag', values: ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa'] }, resultTypes: ['violations'] });
    return r.violations.flatMap((v) => v.nodes.map((n) => `${v.id}: ${n.target.join(' ')}`));
  }, selector);
}

beforeAll(async () => {
  rig = await startBrowserRig();
  formulator = await rig.t.signIn(DEMO.formulator);
  timeZone = (await ok<{ user: { lab: { timeZone: string } } }>(formulator.get('/api/auth/session'))).user.lab.timeZone;
  const today = localDateInZone(new Date(), timeZone);
  const { ingredient } = await ok<{ ingredient: { id: number } }>(
    formulator.post('/api/ingredients', { tradeName: 'Shea butter, refined', inciName: 'Butyrospermum Parkii Butter', function: 'butter' }),
    201,
  );
  const { product } = await ok<{ product: { id: number } }>(formulator.post('/api/products', { name: balm.name, type: 'anhydrous_balm' }), 201);
  balm.productId = product.id;
  for (const code of ['A', 'B']) {
    const v = await ok<{ variant: { id: number } }>(
      formulator.post(`/api/products/${product.id}/variants`, { code, name: `Balm ${code}`, lines: [{ ingredientId: ingredient.id, phase: 'A', percent: 100 }] }),
      201,
    );
    const b = await ok<{ batch: { id: number } }>(
      formulator.post(`/api/variants/${v.variant.id}/batches`, { lotCode: `SLB-${code}-01`, madeOn: addDays(today, -3), sizeGrams: 800, packaging: '15 mL aluminium tin' }),
      201,
    );
    balm.batchIds.push(b.batch.id);
  }
  oven = (await ok<{ condition: { id: number } }>(formulator.post('/api/storage-conditions', { kind: 'constant', name: 'Oven 40 °C', setpointC: 40, location: 'Oven 3' }), 201)).condition.id;
  fridge = (
    await ok<{ condition: { id: number } }>(formulator.post('/api/storage-conditions', { kind: 'constant', name: 'Fridge 5 °C', setpointC: 5, location: 'Fridge 1', isControl: true }), 201)
  ).condition.id;
});
afterAll(async () => rig?.close());

describe('plans from templates', () => {
  it('ticks the checks of an anhydrous balm, and saves the plan as a whole-study template (desktop)', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/new`);
    await page.getByTestId('plan-start-from').waitFor();
    await choose(page, 'plan-product', balm.name);

    // Graininess, bloom and hardness rather than emulsion separation and pH.
    for (const code of ['graininess', 'bloom', 'hardness', 'appearance', 'odor']) {
      await expect.poll(() => page.getByTestId(`plan-attribute-${code}`).getAttribute('class'), { message: code }).toContain('on');
    }
    for (const code of ['separation', 'ph', 'viscosity']) expect(await page.getByTestId(`plan-attribute-${code}`).getAttribute('class'), code).not.toContain(' on');
    expect(await page.getByTestId('plan-attribute-set').textContent()).toContain('anhydrous balm or butter');

    await page.getByTestId(`plan-condition-${oven}`).locator('.el-checkbox').first().click();
    await page.getByTestId(`plan-condition-${fridge}`).locator('.el-checkbox').first().click();
    await input(page, 'plan-container').fill('15 mL aluminium tin');

    await page.getByTestId('plan-save-template').click();
    await page.getByTestId('template-dialog').waitFor();
    expect(await page.getByTestId('template-dialog').textContent()).toContain('2 storage conditions with');
    await input(page, 'template-name').fill('Balm, 12 weeks at 40 °C');
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(SHOTS, 'plan-template-save-desktop.png') });
    const saved = page.waitForResponse((r) => r.url().endsWith('/api/study-templates') && r.request().method() === 'POST');
    await page.getByTestId('template-save').click();
    expect((await saved).status()).toBe(201);
    const { templates } = await ok<{ templates: { id: number; name: string; attributeCount: number }[] }>(formulator.get('/api/study-templates'));
    const t = templates.find((x) => x.name === 'Balm, 12 weeks at 40 °C')!;
    templateId = t.id;
    expect(t.attributeCount).toBeGreaterThanOrEqual(7);

    await page.evaluate(() => window.scrollTo(0, 0));
    await page.waitForTimeout(200);
    await page.screenshot({ path: join(SHOTS, 'plan-start-from-desktop.png') });
    await page.locator('#step-4').evaluate((el) => window.scrollTo(0, el.getBoundingClientRect().top + window.scrollY - 90));
    await page.waitForTimeout(200);
    await page.screenshot({ path: join(SHOTS, 'plan-attribute-set-balm-desktop.png') });
    expect(await axeIn(page, '[data-testid="plan-start-from"]')).toEqual([]);
    expect(problems).toEqual([]);
    await page.close();
  });

  // At both bench sizes; the later tests use the study started last.
  for (const [name, viewport] of [
    ['tablet 1024 x 768', TABLET],
    ['phone 390 x 844', PHONE],
  ] as const) {
    it(`starts a new study from the whole-study template (${name})`, async () => {
      const page = await rig.browser.newPage({ viewport });
      const problems = watchPage(page);
      await signInSettled(page, rig.baseUrl, DEMO.formulator);
      await page.goto(`${rig.baseUrl}/studies/new`);
      await page.getByTestId('start-kind-template').click();
      await choose(page, 'start-template', 'Balm, 12 weeks at 40 °C', false);
      await expect.poll(() => page.getByTestId('start-applied').textContent()).toContain('Balm, 12 weeks at 40 °C');
      // The template's conditions and checkpoints, container and criteria are in the plan.
      await expect.poll(() => page.getByTestId(`plan-condition-${oven}`).locator('.el-checkbox').first().getAttribute('class')).toContain('is-checked');
      expect(await page.getByTestId(`plan-condition-${fridge}`).locator('.el-checkbox').first().getAttribute('class')).toContain('is-checked');
      expect(await input(page, 'plan-container').inputValue()).toBe('15 mL aluminium tin');
      await page.evaluate(() => window.scrollTo(0, 0));
      await page.waitForTimeout(200);
      await page.screenshot({ path: join(SHOTS, `plan-from-template-${name.split(' ')[0]}.png`) });

      // The formulator picks the product, the batches and the start date (today).
      await choose(page, 'plan-product', balm.name);
      for (const id of balm.batchIds) await page.getByTestId(`plan-batch-${id}`).click();
      await expect.poll(() => page.getByTestId('preview-samples').textContent(), { timeout: 10_000 }).toBe(String(balm.batchIds.length * 3));
      // The template's attributes stay (the product's set does not replace them).
      expect(await page.getByTestId('plan-attribute-hardness').getAttribute('class')).toContain('on');
      expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(viewport.width);

      await page.getByTestId('plan-start-study').click();
      await page.getByTestId('start-confirm').waitFor();
      await page.waitForTimeout(400);
      await page.getByTestId('start-confirm').click();
      await page.waitForURL(/\/studies\/\d+$/);
      studyId = Number(/\/studies\/(\d+)$/.exec(page.url())![1]);

      const [{ study }, { draft }] = await Promise.all([
        ok<{ study: { status: string; conditions: { conditionId: number; offsets: unknown[] }[]; attributes: { attributeId: number }[]; containerDescription: string } }>(
          formulator.get(`/api/studies/${studyId}`),
        ),
        ok<{ draft: { conditions: { conditionId: number; offsets: unknown[] }[]; attributes: { attributeId: number }[] } }>(formulator.get(`/api/study-templates/${templateId}/draft`)),
      ]);
      expect(study.status).toBe('running');
      expect(study.conditions.map((c) => [c.conditionId, c.offsets])).toEqual(draft.conditions.map((c) => [c.conditionId, c.offsets]));
      expect(study.attributes.map((a) => a.attributeId)).toEqual(draft.attributes.map((a) => a.attributeId));
      expect(study.containerDescription).toBe('15 mL aluminium tin');
      // The new study's page says so, and fits the screen too.
      await expect.poll(() => page.getByTestId('study-status').getAttribute('data-status')).toBe('running');
      expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(viewport.width);
      expect(problems).toEqual([]);
      await page.close();
    });
  }

  it('copies the previous study for the next one: same product and plan, new batches and date (phone 390 x 844)', async () => {
    const page = await rig.browser.newPage({ viewport: PHONE });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/new`);
    await page.getByTestId('start-kind-study').click();
    await page.getByTestId('start-study').click();
    await page.getByRole('option').filter({ hasText: balm.name }).first().click();
    await expect.poll(() => page.getByTestId('start-applied').textContent()).toContain('the study');
    await expect.poll(() => page.getByTestId('plan-product').textContent()).toContain(balm.name);
    // No batch is carried over: the formulator picks them.
    for (const id of balm.batchIds) expect(await page.getByTestId(`plan-batch-${id}`).getAttribute('class')).not.toContain(' on');
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(PHONE.width);
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.waitForTimeout(200);
    await page.screenshot({ path: join(SHOTS, 'plan-copy-study-phone.png') });
    await page.locator('[data-testid="plan-save-template"]').scrollIntoViewIfNeeded();
    await page.waitForTimeout(200);
    await page.screenshot({ path: join(SHOTS, 'plan-actions-phone.png') });
    expect(problems).toEqual([]);
    await page.close();
  });

  it('the analysis of the new study says "no results yet", not "no failures" (desktop)', async () => {
    // Only the initial test is recorded: the control has no reading of its own yet.
    const technician = await rig.t.signIn(DEMO.technician);
    const { study } = await ok<{ study: { checkpoints: { id: number; kind: string }[]; samples: { code: string; studyConditionId: number | null }[]; attributes: { id: number; kind: string }[] } }>(
      formulator.get(`/api/studies/${studyId}`),
    );
    const initial = study.checkpoints.find((c) => c.kind === 'initial')!;
    const value = (kind: string) => (kind === 'measured' ? 12.5 : kind === 'graded' ? 0 : kind === 'compared' ? 'no_change' : kind === 'pass_fail' ? true : 'fine');
    for (const smp of study.samples.filter((x) => x.studyConditionId == null)) {
      await ok(technician.put(`/api/samples/${smp.code}/checkpoints/${initial.id}/observations`, { entries: study.attributes.map((a) => ({ studyAttributeId: a.id, value: value(a.kind) })) }));
    }
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${studyId}/analysis`);
    const gate = page.getByTestId('gate-summary-control').first();
    await gate.waitFor({ timeout: 15_000 });
    expect(await gate.textContent()).toMatch(/Control: no results yet \(Fridge 5 °C\)/);
    const text = (await page.locator('main').textContent()) ?? '';
    expect(text).not.toContain('no failures');
    expect(text).not.toMatch(/No figure yet\.\s*No figure yet/);
    await gate.scrollIntoViewIfNeeded();
    await page.waitForTimeout(200);
    await page.screenshot({ path: join(SHOTS, 'analysis-no-results-desktop.png') });
    expect(problems).toEqual([]);
    await page.close();
  });
});

describe('attribute sets, batch lots and the batch sheet', () => {
  for (const [name, viewport] of [
    ['desktop', VIEWPORTS.desktop],
    ['tablet', TABLET],
    ['phone', PHONE],
  ] as const) {
    it(`the library shows the checks per product type (${name})`, async () => {
      const page = await rig.browser.newPage({ viewport });
      const problems = watchPage(page);
      await signInSettled(page, rig.baseUrl, DEMO.formulator);
      await page.goto(`${rig.baseUrl}/attributes`);
      const scrub = page.getByTestId('set-anhydrous_scrub');
      await scrub.waitFor();
      expect(await scrub.textContent()).toMatch(/Oil separation.*Crystal dissolution.*Grit feel/);
      if (name === 'desktop') {
        // The lab changes the wash set: foam height out.
        await page.getByTestId('set-edit-surfactant_wash').click();
        const select = page.getByTestId('set-select-surfactant_wash');
        await select.locator('.el-tag').filter({ hasText: 'Foam height' }).locator('.el-tag__close').click();
        await page.getByTestId('set-save-surfactant_wash').click();
        await expect.poll(() => page.getByTestId('set-surfactant_wash').textContent()).toContain('Your lab’s set');
        expect(await page.getByTestId('set-surfactant_wash').textContent()).not.toContain('Foam height');
        expect(await axeIn(page, '[data-testid="attribute-sets"]')).toEqual([]);
      }
      await page.getByTestId('attribute-sets').scrollIntoViewIfNeeded();
      await page.waitForTimeout(200);
      await page.screenshot({ path: join(SHOTS, `attribute-sets-${name}.png`) });
      expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(viewport.width);
      expect(problems).toEqual([]);
      await page.close();
    });
  }

  it('a batch records each line’s raw-material lot, names its study and prints a batch sheet', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    const batchId = balm.batchIds[0];
    await page.goto(`${rig.baseUrl}/formulas/batches/${batchId}`);
    await page.getByTestId('lots-edit').click();
    await input(page, 'lot-input').fill('SB-24-117');
    await input(page, 'supplier-input').fill('Karité Coop');
    const put = page.waitForResponse((r) => r.url().endsWith(`/api/batches/${batchId}/lots`));
    await page.getByTestId('lots-save').click();
    const answer = await put;
    expect(answer.status(), await answer.text()).toBe(200);
    await expect.poll(() => page.getByTestId('lot-cell').first().textContent()).toBe('SB-24-117');
    expect(await page.getByTestId('batch-studies').textContent()).toContain(balm.name);
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(SHOTS, 'batch-lots-desktop.png'), fullPage: true });

    await page.getByTestId('batch-sheet-link').click();
    await page.waitForURL(new RegExp(`/formulas/batches/${batchId}/sheet$`));
    const sheet = page.getByTestId('batch-sheet');
    await sheet.waitFor();
    expect(await sheet.textContent()).toContain('SB-24-117');
    expect(await sheet.textContent()).toContain('Karité Coop');
    expect(await sheet.textContent()).toContain('Recorded by');
    await page.screenshot({ path: join(SHOTS, 'batch-sheet-desktop.png'), fullPage: true });
    // Printed on Letter paper, the app bar and the toolbar stay off the page.
    await page.getByTestId('sheet-paper').getByText('US Letter').click();
    await page.emulateMedia({ media: 'print' });
    expect(await page.locator('.shell > header').isVisible()).toBe(false);
    expect(await page.getByTestId('sheet-print').isVisible()).toBe(false);
    await page.screenshot({ path: join(SHOTS, 'batch-sheet-print.png'), fullPage: true });
    await page.emulateMedia({ media: 'screen' });

    await page.setViewportSize(PHONE);
    await page.goto(`${rig.baseUrl}/formulas/batches/${batchId}`);
    await page.getByTestId('snapshot-table').waitFor();
    await page.waitForTimeout(200);
    await page.screenshot({ path: join(SHOTS, 'batch-lots-phone.png'), fullPage: true });
    expect(problems).toEqual([]);
    await page.close();
  });
});
