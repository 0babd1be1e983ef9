/**
 * Accessible to everyone at the bench: axe-core (Deque's engine) runs on every main screen of the
 * demo lab (server/demo/, invented data) and the test fails on any WCAG 2.1 A or AA violation
 * (tags wcag2a, wcag2aa, wcag21a, wcag21aa; tests/helpers/browser.ts). The owner sees every
 * screen; the Bench and Record are checked at phone and tablet sizes too.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import type { BenchResponse, StudySummary } from '../../shared/schemas/studies';
import { DEMO } from '../helpers/app';
import { VIEWPORTS, axeViolations, signInSettled, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';

let rig: BrowserRig;
let studies: StudySummary[];
let bench: BenchResponse;

beforeAll(async () => {
  rig = await startBrowserRig({ demo: 'full' });
  const owner = await rig.t.signIn(DEMO.owner);
  studies = (await owner.get('/api/studies')).body.studies;
  bench = (await owner.get('/api/bench')).body;
}, 180_000);
afterAll(async () => rig?.close());

const running = () => studies.find((s) => s.status === 'running' && s.title.includes('A vs B'))!;
const decided = () => studies.find((s) => s.status === 'decided')!;
/** A sample at a checkpoint due now that still has readings to take (not the initial test). */
function dueWork() {
  for (const g of bench.groups)
    for (const c of g.conditions)
      for (const cp of c.checkpoints) {
        const s = cp.samples.find((x) => x.recorded < cp.attributeCount);
        if (cp.kind === 'pull' && (cp.state === 'due' || cp.state === 'overdue') && s) return { code: s.code, checkpointId: cp.id };
      }
  throw new Error('The demo Bench has no pull with readings to take');
}

/** Opens a path, waits until its requests are done and the fonts are in, and runs axe. */
async function check(page: Page, path: string, ready: string) {
  await page.goto(`${rig.baseUrl}${path}`);
  await page.waitForSelector(ready);
  await page.waitForLoadState('networkidle');
  await page.evaluate(() => document.fonts.ready);
  await page.waitForTimeout(300);
  return axeViolations(page);
}

describe('axe-core on the main screens (WCAG 2.1 AA)', () => {
  it('catches what the issue found: a control whose name lacks its visible text, and low contrast', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    await signInSettled(page, rig.baseUrl, DEMO.owner);
    await page.evaluate(() => {
      const probe = document.createElement('div');
      probe.id = 'axe-probe';
      probe.innerHTML =
        '<button id="axe-probe-name" type="button" aria-label="Your settings, Priya Nair">PN</button><p id="axe-probe-contrast" style="color:#909399;background:#fff">Header text</p>';
      document.querySelector('main')!.append(probe);
    });
    const found = await axeViolations(page);
    // The avatar button as it was: initials shown, "Your settings, <name>" as its name (WCAG 2.5.3).
    expect(found.some((v) => v.startsWith('label-content-name-mismatch') && v.includes('#axe-probe-name'))).toBe(true);
    // Element Plus's table-header grey on white: 3.07:1, below 4.5:1 (WCAG 1.4.3).
    expect(found.some((v) => v.startsWith('color-contrast') && v.includes('#axe-probe-contrast'))).toBe(true);
    expect(found.filter((v) => !v.includes('#axe-probe-'))).toEqual([]);
    await page.close();
  });

  it('finds no violation on any main screen at desktop size', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInSettled(page, rig.baseUrl, DEMO.owner);
    const work = dueWork();
    const screens: [string, string, string][] = [
      ['Bench', '/bench', '[data-testid^="bench-checkpoint-"]'],
      ['Record', `/samples/${work.code}/checkpoints/${work.checkpointId}`, '[data-testid^="attr-"]'],
      ['sample page', `/samples/${work.code}`, '[data-testid="sample-checkpoints"]'],
      ['Studies list', '/studies', '[data-testid="studies-table"]'],
      ['study page', `/studies/${running().id}`, 'h1'],
      ['plan builder', '/studies/new', '[data-testid="plan-product"]'],
      ['Formulas', '/formulas', 'h1'],
      ['Storage', '/storage', 'h1'],
      ['Lab page', '/lab', 'h1'],
      ['audit trail', '/lab/audit', 'h1'],
      ['Reviews', '/reviews', 'h1'],
      ['review page', `/reviews/${decided().id}`, 'h1'],
      ['analysis', `/studies/${running().id}/analysis`, 'h1'],
    ];
    const found: string[] = [];
    for (const [name, path, ready] of screens) {
      for (const v of await check(page, path, ready)) found.push(`${name}: ${v}`);
    }
    expect(found).toEqual([]);
    expect(problems).toEqual([]);
    await page.close();
  });

  for (const [size, viewport] of [
    ['phone', { width: 390, height: 844 }],
    ['tablet', { width: 1024, height: 768 }],
  ] as const) {
    it(`finds no violation on the Bench, Record and the sample page at ${size} size`, async () => {
      const context = await rig.browser.newContext({ viewport, hasTouch: true });
      const page = await context.newPage();
      const problems = watchPage(page);
      await signInSettled(page, rig.baseUrl, DEMO.technician);
      const work = dueWork();
      const found: string[] = [];
      for (const [name, path, ready] of [
        ['Bench', '/bench', '[data-testid^="bench-checkpoint-"]'],
        ['Record', `/samples/${work.code}/checkpoints/${work.checkpointId}`, '[data-testid^="attr-"]'],
        ['sample page', `/samples/${work.code}`, '[data-testid="sample-checkpoints"]'],
      ] as const) {
        for (const v of await check(page, path, ready)) found.push(`${name}: ${v}`);
      }
      expect(found).toEqual([]);
      expect(problems).toEqual([]);
      await context.close();
    });
  }
});
