/** Headless Chromium (Debian's) through playwright-core, against a real app on a real MariaDB. */
import { mkdirSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import type { AddressInfo } from 'node:net';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { CHROMIUM } from '../setup/browser';
import { createTestApp, DEMO_PASSWORD, type TestApp } from './app';

export const SHOTS = join(process.cwd(), 'test-results', 'screenshots');

export const VIEWPORTS = {
  desktop: { width: 1440, height: 900 },
  tablet: { width: 820, height: 1180 },
} as const;

export interface BrowserRig {
  t: TestApp;
  browser: Browser;
  baseUrl: string;
  close(): Promise<void>;
}

/** `demo: 'full'` loads the invented demo labs' studies, readings and reviews (as `npm start` does). */
export async function startBrowserRig(opts: { demo?: 'people' | 'full' } = {}): Promise<BrowserRig> {
  const t = await createTestApp({ serveClient: true }, opts);
  const server = t.app.listen(0, '127.0.0.1');
  await new Promise((r) => server.once('listening', r));
  const baseUrl = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  // playwright-core gives each launch a fresh, empty profile of its own.
  const browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--disable-dev-shm-usage',
    ],
  });
  // Service workers are blocked unless a test asks for them (`serviceWorkers: 'allow'`, the offline
  // tests): a precache download cut off when a page closes would count as a failed request.
  const newContext = browser.newContext.bind(browser);
  const newPage = browser.newPage.bind(browser);
  // Reduced motion unless a test asks otherwise: the app then draws no transitions or chart
  // animations (src/styles/main.css), so a click or a screenshot never lands mid-slide.
  browser.newContext = (o = {}) => newContext({ serviceWorkers: 'block', reducedMotion: 'reduce', ...o });
  browser.newPage = (o = {}) => newPage({ serviceWorkers: 'block', reducedMotion: 'reduce', ...o });
  mkdirSync(SHOTS, { recursive: true });
  return {
    t,
    browser,
    baseUrl,
    async close() {
      await browser.close();
      server.closeAllConnections();
      await new Promise((r) => server.close(r));
      await t.close();
    },
  };
}

/** Fails the test on any console error, page error or CSP violation. */
export function watchPage(page: Page): string[] {
  const problems: string[] = [];
  page.on('console', (m) => {
    if (m.type() === 'error') problems.push(`console: ${m.text()}`);
  });
  page.on('pageerror', (e) => problems.push(`page: ${e.message}`));
  page.on('requestfailed', (r) => {
    // A script chunk the browser cancels because the page moved on (the shell's lazy offline kit,
    // say) is no fault of the app; a missing chunk answers 404 and fails its import, which the
    // console reports. Aborted API calls are still reported: they mean a test left a view too early.
    if (r.failure()?.errorText === 'net::ERR_ABORTED' && new URL(r.url()).pathname.startsWith('/assets/')) return;
    problems.push(`request failed: ${r.url()} (${r.failure()?.errorText ?? 'no reason'})`);
  });
  page.on('request', (r) => {
    if (!r.url().startsWith('http://127.0.0.1') && !r.url().startsWith('data:') && !r.url().startsWith('blob:')) {
      problems.push(`outside request: ${r.url()}`);
    }
  });
  return problems;
}

export async function signInAs(page: Page, baseUrl: string, email: string) {
  await page.goto(`${baseUrl}/sign-in`);
  await page.getByTestId('email').fill(email);
  await page.getByTestId('password').fill(DEMO_PASSWORD);
  await page.getByTestId('sign-in').click();
  await page.waitForURL(/\/bench$/);
}

/**
 * Counts the page's requests from now on; `quiet()` resolves once none has been in flight for 300 ms
 * (at most 15 s) and stops counting. Not waitForLoadState('networkidle'): a client-side route change
 * starts no new load, so that can return before the new view has asked for anything.
 */
export function trackRequests(page: Page): { quiet(): Promise<void> } {
  const pending = new Set<unknown>();
  const add = (r: unknown) => pending.add(r);
  const drop = (r: unknown) => pending.delete(r);
  page.on('request', add);
  page.on('requestfinished', drop);
  page.on('requestfailed', drop);
  return {
    async quiet() {
      let quietSince = Date.now();
      for (const end = Date.now() + 15_000; Date.now() < end; ) {
        if (pending.size > 0) quietSince = Date.now();
        else if (Date.now() - quietSince >= 300) break;
        await page.waitForTimeout(50);
      }
      page.off('request', add);
      page.off('requestfinished', drop);
      page.off('requestfailed', drop);
    },
  };
}

/** Waits until the Bench, just reached, has its data and no request in flight, so navigating away aborts nothing. */
export async function benchSettled(page: Page, reach: () => Promise<unknown>) {
  const requests = trackRequests(page);
  const bench = page.waitForResponse((r) => new URL(r.url()).pathname === '/api/bench', { timeout: 30_000 });
  await reach();
  await bench;
  await requests.quiet();
}

/** Signs in and lets the Bench finish loading, so navigating away at once aborts no request (which watchPage would report). */
export async function signInSettled(page: Page, baseUrl: string, email: string) {
  await benchSettled(page, () => signInAs(page, baseUrl, email));
}

/** The WCAG 2.1 A and AA rules of axe-core (Deque's engine, pinned in package.json). */
const WCAG_21_AA = ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa'];
let axeSource: string | null = null;

/**
 * Runs axe-core on the page as it is now and returns each WCAG 2.1 A/AA violation in words
 * (rule, impact, help, and every element's selector and why), so a test can expect `[]`. The
 * engine is evaluated in the page through the DevTools protocol, which the app's CSP does not
 * block. "label-content-name-mismatch" (2.5.3, a visible label inside the accessible name) is
 * experimental in axe and is switched on too.
 */
export async function axeViolations(page: Page, opts: { exclude?: string[] } = {}): Promise<string[]> {
  axeSource ??= readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8');
  if (!(await page.evaluate(() => 'axe' in window))) await page.evaluate(axeSource);
  const violations = await page.evaluate(
    async ({ tags, exclude }) => {
      type Result = { violations: { id: string; impact: string | null; help: string; nodes: { target: unknown[]; failureSummary?: string }[] }[] };
      const axe = (window as unknown as { axe: { run: (ctx: unknown, o: unknown) => Promise<Result>; getRules: (tags: string[]) => { ruleId: string; tags: string[] }[] } }).axe;
      // The rules of those tags (experimental ones left out, as axe does by default), and the name-mismatch rule by name.
      const ids = axe
        .getRules(tags)
        .filter((rule) => !rule.tags.includes('experimental') || rule.ruleId === 'label-content-name-mismatch')
        .map((rule) => rule.ruleId);
      const r = await axe.run(exclude.length ? { include: [['html']], exclude: exclude.map((x) => [x]) } : document, {
        runOnly: { type: 'rule', values: ids },
        resultTypes: ['violations'],
      });
      return r.violations.map((v) => ({
        id: v.id,
        impact: v.impact,
        help: v.help,
        nodes: v.nodes.map((n) => `${n.target.join(' ')}: ${(n.failureSummary ?? '').replace(/\s+/g, ' ').trim()}`),
      }));
    },
    { tags: WCAG_21_AA, exclude: opts.exclude ?? [] },
  );
  return violations.flatMap((v) => v.nodes.map((n) => `${v.id} (${v.impact}): ${v.help} | ${n}`));
}
