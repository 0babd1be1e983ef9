/**
 * Colour from photos at tablet size (1024 x 768, touch): a technician opens Record for a 45 °C sample
 * with a photo of the jar beside a grey card, drags a box over the product and one over the card, and
 * reads the ΔE00 against the initial photo (marked through the API). The study, the photos (made with
 * sharp; invented colours) and the lab's card are made through the API.
 */
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays } from '../../shared/compute/schedule';
import { deltaE2000 } from '../../shared/compute/color';
import { linearRgbToLab, srgbToLinear } from '../../shared/compute/photo-colour';
import type { BenchResponse, StudyDetail } from '../../shared/schemas/studies';
import { DEMO, type Client } from '../helpers/app';
import { axeViolations, SHOTS, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';
import { makeCatalogue, planFor } from '../helpers/fixtures';

const TABLET = { width: 1024, height: 768 } as const;
type Rgb = [number, number, number];
const PRODUCT = { x: 0.1, y: 0.2, w: 0.3, h: 0.5 };
const PATCH = { x: 0.6, y: 0.2, w: 0.3, h: 0.5 };
const GREY: Rgb = [160, 160, 160];
/** IEC 61966-2-1 decoding, CIE 15 CIELAB (D65). */
const labOf = (rgb: Rgb) => linearRgbToLab(rgb.map((v) => srgbToLinear(v / 255)) as Rgb);

let rig: BrowserRig;
let formulator: Client;
let study: StudyDetail;
let ovenCode = '';
let w1Id = 0;

async function photo(product: Rgb): Promise<Buffer> {
  const [w, h] = [800, 600];
  const box = (b: typeof PRODUCT, rgb: Rgb) => ({
    input: { create: { width: Math.round(b.w * w), height: Math.round(b.h * h), channels: 3 as const, background: { r: rgb[0], g: rgb[1], b: rgb[2] } } },
    left: Math.round(b.x * w),
    top: Math.round(b.y * h),
  });
  return sharp({ create: { width: w, height: h, channels: 3, background: { r: 70, g: 72, b: 80 } } })
    .composite([box(PRODUCT, product), box(PATCH, GREY)])
    .jpeg({ quality: 95 })
    .toBuffer();
}

beforeAll(async () => {
  rig = await startBrowserRig();
  formulator = await rig.t.signIn(DEMO.formulator);
  const cat = await makeCatalogue(rig.t.db, rig.t.labs[0].id, 'Calendula hand cream');
  const today = ((await formulator.get('/api/bench?days=7')).body as BenchResponse).today;
  const created = await formulator.post('/api/studies', planFor(cat, addDays(today, -7)));
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  study = (await formulator.post(`/api/studies/${created.body.study.id}/start`)).body.study;
  const oven = study.conditions[1].id;
  const ovenSample = study.samples.find((s) => s.studyConditionId === oven)!;
  const retained = study.samples.find((s) => s.studyConditionId === null && s.batchId === ovenSample.batchId)!;
  const initial = study.checkpoints.find((c) => c.kind === 'initial')!;
  w1Id = study.checkpoints.find((c) => c.label === 'Week 1' && c.studyConditionId === oven)!.id;
  ovenCode = ovenSample.code;
  const card = labOf(GREY);
  const cardId = (await formulator.post('/api/colour-cards', { name: 'Grey card', L: card.L, a: card.a, b: card.b })).body.card.id;
  const up = async (code: string, cpId: number, bytes: Buffer) =>
    (await formulator.agent.post(`/api/samples/${code}/checkpoints/${cpId}/photos`).set('X-Keepwell-Request', '1').attach('photos', bytes, 'jar.jpg')).body.photos.at(-1).id as number;
  const initialPhoto = await up(retained.code, initial.id, await photo([222, 196, 150]));
  expect((await formulator.put(`/api/photos/${initialPhoto}/regions`, { product: PRODUCT, patch: PATCH, cardId })).status).toBe(200);
  await up(ovenCode, w1Id, await photo([214, 180, 118]));
  // A pH reading at both checkpoints (invented), so the analysis has results to show.
  const ph = study.attributes.find((x) => x.code === 'ph')!.id;
  for (const [code, cpId] of [[retained.code, initial.id], [ovenCode, w1Id]] as const) {
    const res = await formulator.put(`/api/samples/${code}/checkpoints/${cpId}/observations`, { entries: [{ studyAttributeId: ph, value: 5.3, method: { method: 'neat' } }] });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
  }
});
afterAll(async () => rig?.close());

describe('colour from photos on Record', () => {
  it('marks the product and the card by dragging at tablet size and shows ΔE00', async () => {
    const context = await rig.browser.newContext({ viewport: TABLET, hasTouch: true });
    const page = await context.newPage();
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    await page.goto(`${rig.baseUrl}/samples/${ovenCode}/checkpoints/${w1Id}`);
    await page.waitForSelector('[data-testid="photo-colour"]');
    await page.locator('[data-testid^="colour-measure-"]').first().click();
    const frame = page.getByTestId('colour-frame');
    await frame.locator('img').waitFor();
    await expect.poll(async () => (await frame.boundingBox())?.width ?? 0).toBeGreaterThan(100);
    // The photo's first load (the display copy) must be complete before measuring the frame.
    await page.waitForFunction(() => (document.querySelector('[data-testid="colour-frame"] img') as HTMLImageElement | null)?.complete);
    const fb = (await frame.boundingBox())!;
    const drag = async (b: typeof PRODUCT) => {
      // Inside the box by a margin, so the box covers only the flat colour.
      const x0 = fb.x + (b.x + 0.05) * fb.width;
      const y0 = fb.y + (b.y + 0.05) * fb.height;
      const x1 = fb.x + (b.x + b.w - 0.05) * fb.width;
      const y1 = fb.y + (b.y + b.h - 0.05) * fb.height;
      await page.mouse.move(x0, y0);
      await page.mouse.down();
      await page.mouse.move((x0 + x1) / 2, (y0 + y1) / 2, { steps: 4 });
      await page.mouse.move(x1, y1, { steps: 4 });
      await page.mouse.up();
    };
    await drag(PRODUCT);
    await drag(PATCH);
    const initialDe = page.getByTestId('colour-de-initial');
    await expect.poll(() => initialDe.textContent(), { timeout: 15_000 }).toMatch(/^\s*\d+\.\d\s*$/);
    const shown = Number((await initialDe.textContent())!.trim());
    // CIEDE2000 of the two invented sRGB colours (IEC 61966-2-1, CIE 15): the photo estimate lands within 1.
    const expected = deltaE2000(labOf([222, 196, 150]), labOf([214, 180, 118]))!;
    expect(Math.abs(shown - expected)).toBeLessThan(1);
    expect(await page.getByTestId('colour-result').textContent()).toContain('always wins over this estimate');
    await page.screenshot({ path: join(SHOTS, 'photo-colour-tablet.png'), fullPage: false });
    // WCAG 2.1 A/AA (axe-core) on the Record page with the dialog open.
    expect(await axeViolations(page)).toEqual([]);
    expect(problems).toEqual([]);
    await context.close();
  });

  it("a formulator enters the lab's own card: an impossible L* is named beside the field, then the card is chosen", async () => {
    const context = await rig.browser.newContext({ viewport: TABLET });
    const page = await context.newPage();
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/samples/${ovenCode}/checkpoints/${w1Id}`);
    await page.locator('[data-testid^="colour-measure-"]').first().click();
    await page.getByTestId('colour-card-own').click();
    // Element Plus puts the test id on the native input (el-input) or on its wrapper (el-input-number).
    const field = (id: string) => page.locator(`input[data-testid="${id}"], [data-testid="${id}"] input`);
    await field('colour-card-name').fill('Lab grey card no. 2');
    await field('colour-card-L').fill('120');
    await page.getByTestId('colour-card-save').click();
    const form = page.getByTestId('colour-card-form');
    await expect.poll(() => form.textContent()).toContain('L* is at most 100');
    await field('colour-card-L').fill('52.3');
    await page.getByTestId('colour-card-save').click();
    await expect.poll(() => page.getByTestId('colour-card').textContent()).toContain('Lab grey card no. 2');
    await expect.poll(() => page.getByTestId('colour-card').textContent()).toContain('L* 52.3');
    expect(problems).toEqual([]);
    await context.close();
  });

  it('the analysis charts the photo ΔE00 beside the judgement by eye (desktop)', async () => {
    const context = await rig.browser.newContext({ viewport: { width: 1440, height: 900 } });
    const page = await context.newPage();
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.formulator);
    await page.goto(`${rig.baseUrl}/studies/${study.id}/analysis`);
    const card = page.getByTestId('delta-e');
    await card.waitFor();
    await expect.poll(() => card.textContent()).toContain('· photo');
    expect(await card.textContent()).toContain('an instrument reading wins where both exist');
    await card.scrollIntoViewIfNeeded();
    await card.screenshot({ path: join(SHOTS, 'photo-colour-analysis.png') });
    expect(problems).toEqual([]);
    await context.close();
  });

  it('shows the measured value on a phone (390 x 844)', async () => {
    const context = await rig.browser.newContext({ viewport: { width: 390, height: 844 }, hasTouch: true, isMobile: true });
    const page = await context.newPage();
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.technician);
    await page.goto(`${rig.baseUrl}/samples/${ovenCode}/checkpoints/${w1Id}`);
    await page.locator('[data-testid^="colour-measure-"]').first().click();
    await expect.poll(() => page.getByTestId('colour-de-initial').textContent(), { timeout: 15_000 }).toMatch(/\d+\.\d/);
    await page.getByTestId('colour-result').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(SHOTS, 'photo-colour-phone.png') });
    // The dialog fits the phone's width: nothing scrolls sideways.
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
    expect(problems).toEqual([]);
    await context.close();
  });
});
