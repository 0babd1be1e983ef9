/**
 * In the browser: an owner invites a technician from the Lab page, the
 * message appears in the development Outbox, its link sets a name and a
 * password, and the new member signs in to the technician's navigation.
 * Also "forgot password" from the sign-in page, and screenshots of the
 * rendered e-mails and the Outbox.
 */
import { join } from 'node:path';
import { desc, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mailOutbox } from '../../server/db/schema';
import { closeMailerFor } from '../../server/mail/mailer';
import { renderMail } from '../../server/mail/templates';
import { accountWorkSettled } from '../../server/routes/account';
import { DEMO } from '../helpers/app';
import { SHOTS, VIEWPORTS, benchSettled, signInAs, startBrowserRig, watchPage, type BrowserRig } from '../helpers/browser';

let rig: BrowserRig;
beforeAll(async () => {
  rig = await startBrowserRig();
});
afterAll(async () => {
  await accountWorkSettled();
  if (rig) await closeMailerFor(rig.t.db);
  await rig?.close();
});

/** Polls wait for the app under load (vitest's default is 1 s). */
const WAIT = { timeout: 15_000 };

/** Links in e-mails use PUBLIC_URL or 127.0.0.1:PORT; the test server listens on a port of its own. */
const onRig = (href: string) => {
  const u = new URL(href);
  return `${rig.baseUrl}${u.pathname}${u.search}`;
};

describe('invitations in the browser', () => {
  it('an owner invites a technician; the Outbox shows the e-mail; its link sets a password; the technician signs in', async () => {
    const address = 'ines.moreau@larkspur.example';
    const page = await rig.browser.newPage({ viewport: VIEWPORTS.desktop });
    const problems = watchPage(page);
    await signInAs(page, rig.baseUrl, DEMO.owner);
    await page.getByTestId('nav-lab').click();
    await page.waitForSelector('[data-testid="members-table"] .el-table__row');

    // A bad address first: the error shows beside the field.
    await page.getByTestId('invite-email').fill('ines.moreau@');
    await page.getByTestId('invite-send').click();
    await expect.poll(() => page.locator('.invite .el-form-item__error').first().textContent(), WAIT).toContain('valid e-mail');
    // An address already a member: the server's 409 shows beside the field too.
    await page.getByTestId('invite-email').fill(DEMO.formulator);
    await page.getByTestId('invite-send').click();
    await expect.poll(() => page.locator('.invite .el-form-item__error').first().textContent(), WAIT).toContain('already a member');

    await page.getByTestId('invite-email').fill(address);
    await page.getByTestId('invite-send').click();
    await page.getByTestId('invitation-row').filter({ hasText: address }).waitFor();
    await page.screenshot({ path: join(SHOTS, 'lab-invite-desktop.png'), fullPage: true });

    await page.getByTestId('outbox-link').click();
    await page.waitForURL(/\/lab\/outbox$/);
    await page.getByTestId('outbox-item').first().waitFor();
    expect(await page.getByTestId('outbox-item').first().textContent()).toContain('invited you to Larkspur Skin Studio');
    expect(await page.getByTestId('outbox-to').textContent()).toBe(address);
    const frame = page.frameLocator('[data-testid="outbox-html"]');
    await expect.poll(() => frame.locator('h1').textContent(), WAIT).toBe('Join Larkspur Skin Studio on Keepwell');
    await page.screenshot({ path: join(SHOTS, 'outbox-desktop.png'), fullPage: true });
    await page.getByText('Plain text').click();
    expect(await page.getByTestId('outbox-text').textContent()).toContain('Accept the invitation:');
    const href = await page.getByTestId('message-link').first().getAttribute('href');
    expect(href).toMatch(/\/invitation\/[A-Za-z0-9_-]{43}$/);
    await page.getByTestId('sign-out').click();
    await page.waitForURL(/\/sign-in/);
    // The 409 of the address already a member is expected; nothing else may fail.
    expect(problems.filter((p) => !p.includes('409'))).toEqual([]);
    await page.close();

    // The invited person, on a tablet, with no session.
    const context = await rig.browser.newContext({ viewport: VIEWPORTS.tablet });
    const p2 = await context.newPage();
    const problems2 = watchPage(p2);
    await p2.goto(onRig(href!));
    await expect.poll(() => p2.locator('h1').textContent(), WAIT).toBe('Join Larkspur Skin Studio');
    expect(await p2.getByTestId('invited-email').inputValue()).toBe(address);
    await p2.getByTestId('name').fill('Inès Moreau');
    await p2.getByTestId('password').fill('short');
    await p2.getByTestId('accept').click();
    await expect.poll(() => p2.locator('.el-form-item__error').first().textContent(), WAIT).toContain('At least 10 characters');
    // A common password is refused by the server, beside the field.
    await p2.getByTestId('password').fill('qwertyuiop');
    await p2.getByTestId('accept').click();
    await expect.poll(() => p2.locator('.el-form-item__error').first().textContent(), WAIT).toContain('common passwords');
    await p2.waitForTimeout(400); // the error's fade-in
    await p2.screenshot({ path: join(SHOTS, 'accept-invitation-tablet.png') });
    await p2.getByTestId('password').fill('copper kettle by the window');
    // Signed in at once with the password just chosen: straight to the Bench, no second sign-in.
    await benchSettled(p2, async () => {
      await p2.getByTestId('accept').click();
      await p2.waitForURL(/\/bench$/);
    });
    const links = await p2.locator('nav[aria-label="Main"] a').allTextContents();
    expect(links.map((l) => l.trim())).toEqual(['Bench', 'Studies', 'Formulas', 'Storage']);
    expect(await p2.locator('.who-name').textContent()).toBe('Inès Moreau');

    // The link was single-use.
    await p2.goto(onRig(href!));
    await expect.poll(() => p2.getByTestId('link-error').textContent(), WAIT).toContain('already been used');
    // The 400 of the refused password and the 410 of the used link are expected; nothing else may fail.
    expect(problems2.filter((p) => !/status of (400|410)/.test(p))).toEqual([]);
    await context.close();
  });

  it('forgot password: the link from the sign-in page leads to a new password', async () => {
    const context = await rig.browser.newContext({ viewport: VIEWPORTS.desktop });
    const page = await context.newPage();
    const problems = watchPage(page);
    await page.goto(`${rig.baseUrl}/sign-in`);
    await page.getByTestId('forgot-password').click();
    await page.waitForURL(/\/forgot-password$/);
    await page.getByTestId('email').fill(DEMO.technician);
    await page.getByTestId('send-link').click();
    await page.getByTestId('reset-requested').waitFor();
    await page.screenshot({ path: join(SHOTS, 'forgot-password-desktop.png') });
    await accountWorkSettled();
    const [mail] = await rig.t.db.select().from(mailOutbox).where(eq(mailOutbox.to, DEMO.technician)).orderBy(desc(mailOutbox.id)).limit(1);
    const href = /http:\/\/\S+\/reset-password\/[A-Za-z0-9_-]{43}/.exec(mail.text!)![0];
    await page.goto(onRig(href));
    await page.getByTestId('password').fill('north window kettle');
    await page.getByTestId('save-password').click();
    await page.getByTestId('reset-done').waitFor();
    await page.getByTestId('to-sign-in').click();
    await page.getByTestId('email').fill(DEMO.technician);
    await page.getByTestId('password').fill('north window kettle');
    await page.getByTestId('sign-in').click();
    await page.waitForURL(/\/bench$/);
    expect(problems).toEqual([]);
    await context.close();
  });

  it('renders the e-mails as a mail client would (screenshots)', async () => {
    const [invitation] = await rig.t.db
      .select()
      .from(mailOutbox)
      .where(eq(mailOutbox.to, 'ines.moreau@larkspur.example'))
      .limit(1);
    // A digest-like message built with the same template as the reminders (sample content, invented).
    const digest = renderMail({
      labName: 'Larkspur Skin Studio',
      subject: 'Today at Larkspur Skin Studio: 3 checks due, 1 overdue',
      preheader: '3 checks due today, 1 overdue.',
      title: 'Good morning, Priya',
      blocks: [
        { kind: 'paragraph', text: 'Here is what waits for you today, grouped by where the samples are stored.' },
        {
          kind: 'list',
          heading: 'Oven 2 - 40 °C / 75 % RH',
          items: [
            { text: 'LS-0042 Calendula hand cream, variant B', url: 'http://127.0.0.1:3000/samples/LS-0042', note: 'Week 4, overdue since Mon 4 Jan' },
            { text: 'LS-0043 Calendula hand cream, variant A', url: 'http://127.0.0.1:3000/samples/LS-0043', note: 'Week 4, due today' },
          ],
        },
        {
          kind: 'list',
          heading: 'Fridge 1 - 5 °C (control)',
          items: [{ text: 'LS-0040 Calendula hand cream, variant A', url: 'http://127.0.0.1:3000/samples/LS-0040', note: 'Week 4, due today' }],
        },
        { kind: 'button', label: 'Open the Bench', url: 'http://127.0.0.1:3000/bench' },
        { kind: 'note', text: 'Hot ovens and dry ice: wear the usual protection, and follow your local safety rules.' },
      ],
      footer: 'You receive this because morning reminders are on for you at Larkspur Skin Studio.',
    });
    for (const [name, html] of [
      ['email-invitation', invitation.html!],
      ['email-digest-sample', digest.html],
    ] as const) {
      for (const [vp, size] of Object.entries({ desktop: VIEWPORTS.desktop, phone: { width: 390, height: 844 } })) {
        const page = await rig.browser.newPage({ viewport: size });
        const outside: string[] = [];
        page.on('request', (r) => {
          if (!r.url().startsWith('data:') && r.url() !== 'about:blank') outside.push(r.url());
        });
        await page.setContent(html, { waitUntil: 'load' });
        await page.screenshot({ path: join(SHOTS, `${name}-${vp}.png`), fullPage: true });
        // No tracking: rendering the message fetches nothing.
        expect(outside).toEqual([]);
        await page.close();
      }
    }
  });
});
