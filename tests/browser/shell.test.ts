import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { DEMO, DEMO_PASSWORD } from '../helpers/app';
import { SHOTS, VIEWPORTS, signInAs, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';

const PHONE = { width: 390, height: 844 } as const;

let rig: BrowserRig;
beforeAll(async () => {
  rig = await startBrowserRig();
});
afterAll(async () => rig?.close());

const NAV = {
  technician: ['Bench', 'Studies', 'Formulas', 'Storage'],
  formulator: ['Bench', 'Studies', 'Formulas', 'Storage'],
  owner: ['Bench', 'Studies', 'Formulas', 'Storage', 'Reviews', 'Lab'],
} as const;

describe('sign-in page', () => {
  it('shows field errors beside the fields and a clear message for a wrong password', async () => {
    for (const [vp, size] of Object.entries(VIEWPORTS)) {
      const page = await rig.browser.newPage({ viewport: size });
      const problems = watchPage(page);
      await page.goto(`${rig.baseUrl}/`);
      await page.waitForURL(/\/sign-in/);
      await page.getByTestId('sign-in').click();
      await expect.poll(() => page.locator('.el-form-item__error').count()).toBe(2);
      await page.screenshot({ path: join(SHOTS, `sign-in-errors-${vp}.png`) });
      await page.getByTestId('email').fill(DEMO.owner);
      await page.getByTestId('password').fill('wrong-password');
      await page.getByTestId('sign-in').click();
      await expect.poll(() => page.getByTestId('form-error').textContent()).toContain('E-mail or password is wrong');
      await page.getByTestId('password').fill('');
      await page.reload();
      await page.screenshot({ path: join(SHOTS, `sign-in-${vp}.png`) });
      // The 401 of a wrong password is expected; nothing else may fail.
      expect(problems.filter((p) => !p.includes('401'))).toEqual([]);
      await page.close();
    }
  });
});

describe('navigation per role', () => {
  for (const role of ['technician', 'formulator', 'owner'] as const) {
    it(`${role} sees only what the role may use`, async () => {
      for (const [vp, size] of Object.entries(VIEWPORTS)) {
        const page = await rig.browser.newPage({ viewport: size });
        const problems = watchPage(page);
        await signInAs(page, rig.baseUrl, DEMO[role]);
        const links = await page.locator('nav[aria-label="Main"] a').allTextContents();
        expect(links.map((l) => l.trim())).toEqual(NAV[role]);
        await page.screenshot({ path: join(SHOTS, `shell-${role}-${vp}.png`) });
        if (role === 'owner') {
          await page.getByTestId('nav-lab').click();
          await page.waitForSelector('[data-testid="members-table"] .el-table__row');
          await page.screenshot({ path: join(SHOTS, `lab-${vp}.png`) });
        } else {
          // Typing an owner page's address leads to a clear "not for your role" page.
          await page.goto(`${rig.baseUrl}/lab`);
          await page.waitForURL(/not-allowed/);
          expect(await page.textContent('h2')).toContain('not part of your role');
        }
        await page.getByTestId('sign-out').click();
        await page.waitForURL(/\/sign-in/);
        expect(problems).toEqual([]);
        await page.close();
      }
    });
  }
});

describe('changing one\'s password from the user menu', () => {
  it('opens the change-password dialog within a phone screen (390 x 844), loaded on first opening', async () => {
    const page = await rig.browser.newPage({ viewport: PHONE });
    const problems = watchPage(page);
    await signInAs(page, rig.baseUrl, DEMO.formulator);
    await page.getByTestId('me-menu').click();
    await page.getByTestId('change-password').click();
    await page.getByTestId('current-password').waitFor();
    await page.waitForTimeout(400); // the dialog's opening animation
    const box = (await page.locator('.el-dialog').filter({ has: page.getByTestId('change-password-form') }).boundingBox())!;
    expect(box.x).toBeGreaterThanOrEqual(0);
    expect(box.x + box.width).toBeLessThanOrEqual(PHONE.width);
    await page.screenshot({ path: join(SHOTS, 'change-password-phone.png') });
    expect(problems).toEqual([]);
    await page.close();
  });

  it('refuses a wrong current password, a mismatch and a weak password beside their fields, then changes it and keeps the session', async () => {
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInAs(page, rig.baseUrl, DEMO.technician);
    // Signed in elsewhere too: that session ends with the change.
    const elsewhere = await rig.t.signIn(DEMO.technician);
    await page.getByTestId('me-menu').click();
    await page.getByTestId('change-password').click();
    const dialog = page.getByTestId('change-password-form');
    await dialog.getByTestId('current-password').waitFor();
    const errors = () => dialog.locator('.el-form-item__error').allTextContents();

    // Nothing typed: each field says what it needs; nothing is sent.
    await page.getByTestId('save-new-password').click();
    await expect.poll(errors).toEqual(['Enter your current password', 'At least 10 characters; a few unrelated words make a good one', 'Type the new password again']);

    // A mismatch, then a wrong current password (from the server), then a common one (from the server).
    await dialog.getByTestId('current-password').fill('not-my-password');
    await dialog.getByTestId('new-password').fill('lantern over the moor');
    await dialog.getByTestId('confirm-password').fill('lantern over the mor');
    await page.getByTestId('save-new-password').click();
    await expect.poll(errors).toEqual(['Does not match the new password']);
    await dialog.getByTestId('confirm-password').fill('lantern over the moor');
    await page.getByTestId('save-new-password').click();
    await expect.poll(errors).toEqual(['Wrong password']);
    await page.waitForTimeout(300);
    await page.screenshot({ path: join(SHOTS, 'change-password-wrong.png') });
    await dialog.getByTestId('current-password').fill(DEMO_PASSWORD);
    await dialog.getByTestId('new-password').fill('password123');
    await dialog.getByTestId('confirm-password').fill('password123');
    await page.getByTestId('save-new-password').click();
    await expect.poll(errors).toEqual([expect.stringMatching(/common passwords/)]);

    await dialog.getByTestId('new-password').fill('lantern over the moor');
    await dialog.getByTestId('confirm-password').fill('lantern over the moor');
    await page.getByTestId('save-new-password').click();
    await expect.poll(() => page.locator('.el-message').textContent()).toContain('Your password has been changed. Your other session was signed out.');
    await expect.poll(() => dialog.isVisible()).toBe(false);
    // Still signed in here; the other session is gone; the new password signs in.
    await page.getByTestId('nav-studies').click();
    await page.waitForURL(/\/studies$/);
    expect((await elsewhere.get('/api/auth/me')).status).toBe(401);
    await rig.t.signIn(DEMO.technician, 'lantern over the moor');
    // The refused wrong password (403) and common password (400) are expected; nothing else may fail.
    expect(problems.filter((p) => !/status of 40[03]/.test(p))).toEqual([]);
    await page.close();
  });
});
