/** Headless Chromium (Debian's) through playwright-core, against a real app on a real MariaDB. */
import { mkdirSync } from 'node:fs';
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

export async function startBrowserRig(): Promise<BrowserRig> {
  const t = await createTestApp({ serveClient: true });
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
  page.on('requestfailed', (r) => problems.push(`request failed: ${r.url()}`));
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

/** Signs in and lets the Bench finish loading, so navigating away at once aborts no request (which watchPage would report). */
export async function signInSettled(page: Page, baseUrl: string, email: string) {
  await signInAs(page, baseUrl, email);
  await page.waitForLoadState('networkidle');
}
