/**
 * E-mail end to end against the local fake SMTP service: invitations,
 * password reset, disabling members, preferences and the Outbox. Every
 * message really goes through nodemailer -> SMTP on 127.0.0.1 -> the fake
 * service -> MariaDB, and the tests read it back from mail_outbox.
 */
import { createHash } from 'node:crypto';
import { createServer } from 'node:net';
import express from 'express';
import supertest from 'supertest';
import { and, desc, eq, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig, type Config } from '../../server/config';
import { auditLog, invitations, mailOutbox, passwordResets, rateLimits, users } from '../../server/db/schema';
import { errorHandler } from '../../server/http/errors';
import { createLogger } from '../../server/log';
import { readCapturedMail } from '../../server/mail/fake-smtp';
import { closeMailerFor, createMailer, mailerFor } from '../../server/mail/mailer';
import { accountRoutes, accountWorkSettled, RESET_MAX_PER_HOUR } from '../../server/routes/account';
import { createTestApp, DEMO, DEMO_PASSWORD, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let owner: Client;
const config = loadConfig({ NODE_ENV: 'test' });
const log = createLogger(true);

beforeAll(async () => {
  t = await createTestApp();
  owner = await t.signIn(DEMO.owner);
});
afterAll(async () => {
  await accountWorkSettled();
  await closeMailerFor(t.db);
  await t?.close();
});

async function mailsTo(address: string) {
  return t.db.select().from(mailOutbox).where(eq(mailOutbox.to, address)).orderBy(desc(mailOutbox.id));
}

function linkIn(text: string, path: 'invitation' | 'reset-password'): { url: string; token: string } {
  const m = new RegExp(`(http://127\\.0\\.0\\.1:3000/${path}/([A-Za-z0-9_-]{43}))`).exec(text);
  if (!m) throw new Error(`no ${path} link in:\n${text}`);
  return { url: m[1], token: m[2] };
}

const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');

/** The other half of a link's token changed: looks valid, matches nothing. */
function tamper(token: string): string {
  const c = token[10] === 'A' ? 'B' : 'A';
  return token.slice(0, 10) + c + token.slice(11);
}

/** A port on 127.0.0.1 that nothing listens on. */
async function closedPort(): Promise<number> {
  return new Promise((resolve) => {
    const s = createServer();
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

/** A bare app with only the account routes and a signed-in owner faked in, for settings the main app fixes. */
function miniApp(deps: Partial<Parameters<typeof accountRoutes>[0]> & { cfg?: Config }) {
  const app = express();
  app.use(express.json());
  const lab = t.labs[0];
  app.use((req, _res, next) => {
    req.user = {
      id: lab.members[DEMO.owner],
      name: 'Maya Lindqvist',
      email: DEMO.owner,
      role: 'owner',
      labId: lab.id,
      version: 1,
      lab: { id: lab.id, name: lab.name, timeZone: 'Europe/Berlin', dateFormat: 'YYYY-MM-DD' },
    };
    next();
  });
  app.use(accountRoutes({ db: t.db, config: deps.cfg ?? config, log, ...deps }));
  app.use(errorHandler(() => {}));
  return supertest(app);
}

describe('invitations', () => {
  it('an owner invites a person; the single-use link sets name and password; the person signs in', async () => {
    const address = 'new.tech@larkspur.example';
    const res = await owner.post('/api/invitations', { email: '  New.Tech@Larkspur.example ', role: 'technician' });
    expect(res.status).toBe(201);
    expect(res.body.invitation).toMatchObject({ email: address, role: 'technician', status: 'pending' });
    const expiresIn = new Date(res.body.invitation.expiresAt).getTime() - Date.now();
    expect(expiresIn).toBeGreaterThan(71.9 * 3_600_000);
    expect(expiresIn).toBeLessThanOrEqual(72 * 3_600_000);

    const [mail] = await mailsTo(address);
    expect(mail.labId).toBe(t.labs[0].id);
    expect(mail.subject).toContain('Larkspur Skin Studio');
    expect(mail.text).toContain('Larkspur Skin Studio');
    expect(mail.html).toContain('Larkspur Skin Studio');
    expect(mail.text).toContain('as a technician');
    // No tracking: no images, no remote resources, and every link points into the app.
    expect(mail.html).not.toMatch(/<img|src=|url\(|<link|<script/i);
    const hrefs = [...mail.html!.matchAll(/href="([^"]+)"/g)].map((m) => m[1]);
    expect(hrefs.length).toBeGreaterThan(0);
    for (const h of hrefs) expect(h).toMatch(/^http:\/\/127\.0\.0\.1:3000\/invitation\/[A-Za-z0-9_-]{43}$/);
    const { token } = linkIn(mail.text!, 'invitation');
    expect(linkIn(mail.html!, 'invitation').token).toBe(token);

    // Only the token's SHA-256 is stored.
    const [row] = await t.db.select().from(invitations).where(eq(invitations.email, address));
    expect(row.tokenHash).toBe(sha256(token));
    expect(JSON.stringify(row)).not.toContain(token);

    const anon = t.client();
    const preview = await anon.get(`/api/invitations/by-token/${token}`);
    expect(preview.status).toBe(200);
    expect(preview.body.invitation).toMatchObject({ email: address, role: 'technician', labName: 'Larkspur Skin Studio' });

    // Password rules: at least 10 characters, not a common password, not the e-mail.
    const short = await anon.post(`/api/invitations/by-token/${token}/accept`, { name: 'Ada Brook', password: 'short' });
    expect(short.status).toBe(400);
    expect(short.body.error.fields.password).toMatch(/10 characters/);
    const common = await anon.post(`/api/invitations/by-token/${token}/accept`, { name: 'Ada Brook', password: 'QwertyUiop' });
    expect(common.status).toBe(400);
    expect(common.body.error.fields.password).toMatch(/common passwords/);
    const noName = await anon.post(`/api/invitations/by-token/${token}/accept`, { name: '  ', password: 'lamp river copper field' });
    expect(noName.status).toBe(400);
    expect(noName.body.error.fields.name).toBeTruthy();

    const ok = await anon.post(`/api/invitations/by-token/${token}/accept`, { name: 'Ada Brook', password: 'lamp river copper field' });
    expect(ok.status).toBe(201);
    expect(ok.body.member).toMatchObject({ email: address, name: 'Ada Brook', role: 'technician' });
    // Signed in at once: no second sign-in with the password just chosen.
    expect((await anon.get('/api/auth/session')).body.user).toMatchObject({ email: address, name: 'Ada Brook', role: 'technician' });

    // Single use.
    const again = await anon.post(`/api/invitations/by-token/${token}/accept`, { name: 'Mallory', password: 'another fine password' });
    expect(again.status).toBe(410);
    expect(again.body.error.message).toMatch(/already been used/);
    expect((await anon.get(`/api/invitations/by-token/${token}`)).status).toBe(410);

    const ada = await t.signIn(address, 'lamp river copper field');
    const me = await ada.get('/api/auth/me');
    expect(me.body.user).toMatchObject({ email: address, role: 'technician', lab: { name: 'Larkspur Skin Studio' } });

    const trail = await t.db.select().from(auditLog).where(and(eq(auditLog.labId, t.labs[0].id), eq(auditLog.entityId, String(ok.body.member.id)), eq(auditLog.entity, 'user')));
    expect(trail.map((a) => a.action)).toContain('create');
  });

  it('an address with an account in another lab: answered like any invitation, and the person is told by e-mail', async () => {
    const fresh = await owner.post('/api/invitations', { email: 'someone.new@copperbeech.example', role: 'formulator' });
    const elsewhere = await owner.post('/api/invitations', { email: DEMO.otherTechnician, role: 'formulator' });
    // The owner cannot tell the two apart: same status, same shape, both listed as pending.
    expect(elsewhere.status).toBe(201);
    expect(fresh.status).toBe(201);
    expect(Object.keys(elsewhere.body.invitation).sort()).toEqual(Object.keys(fresh.body.invitation).sort());
    expect(elsewhere.body.invitation).toMatchObject({ email: DEMO.otherTechnician, status: 'pending' });
    const listed = (await owner.get('/api/invitations')).body.invitations.map((i: { email: string }) => i.email);
    expect(listed).toEqual(expect.arrayContaining([DEMO.otherTechnician, 'someone.new@copperbeech.example']));
    // The person learns why there is nothing to accept; no link is sent, their own account is unchanged.
    const [mail] = await mailsTo(DEMO.otherTechnician);
    expect(mail.subject).toMatch(/tried to invite you to Larkspur Skin Studio/);
    expect(mail.text!.replace(/\s+/g, ' ')).toContain('already has a Keepwell account, at Copperbeech Naturals');
    expect(mail.text).not.toMatch(/\/invitation\//);
    await t.signIn(DEMO.otherTechnician);
  });

  it('refuses an address that is already a member (409 naming "email"), bad input and other roles', async () => {
    const member = await owner.post('/api/invitations', { email: DEMO.technician, role: 'technician' });
    expect(member.status).toBe(409);
    expect(member.body.error.fields.email).toMatch(/already a member/);

    const bad = await owner.post('/api/invitations', { email: 'not-an-address', role: 'chemist', extra: 1 });
    expect(bad.status).toBe(400);
    expect(Object.keys(bad.body.error.fields).sort()).toEqual(['email', 'extra', 'role']);

    const formulator = await t.signIn(DEMO.formulator);
    expect((await formulator.post('/api/invitations', { email: 'x@larkspur.example', role: 'technician' })).status).toBe(403);
    expect((await t.client().post('/api/invitations', { email: 'x@larkspur.example', role: 'technician' })).status).toBe(401);
    expect((await mailsTo('x@larkspur.example')).length).toBe(0);
  });

  it('expired, tampered, replaced and withdrawn links are refused with a clear message', async () => {
    const anon = t.client();
    await owner.post('/api/invitations', { email: 'late@larkspur.example', role: 'formulator' });
    const { token } = linkIn((await mailsTo('late@larkspur.example'))[0].text!, 'invitation');

    // Tampered or truncated: not found.
    const tampered = await anon.get(`/api/invitations/by-token/${tamper(token)}`);
    expect(tampered.status).toBe(404);
    expect(tampered.body.error.message).toMatch(/not valid/);
    expect((await anon.get(`/api/invitations/by-token/${token.slice(0, 20)}`)).status).toBe(404);

    // Expired: 72 h are over.
    await t.db.update(invitations).set({ expiresAt: new Date(Date.now() - 60_000) }).where(eq(invitations.tokenHash, sha256(token)));
    const expired = await anon.post(`/api/invitations/by-token/${token}/accept`, { name: 'Late Larry', password: 'lamp river copper field' });
    expect(expired.status).toBe(410);
    expect(expired.body.error.message).toMatch(/expired/);
    expect((await t.db.select().from(users).where(eq(users.email, 'late@larkspur.example'))).length).toBe(0);

    // Inviting again replaces the earlier open invitation.
    await owner.post('/api/invitations', { email: 'twice@larkspur.example', role: 'technician' });
    await owner.post('/api/invitations', { email: 'twice@larkspur.example', role: 'formulator' });
    const [second, first] = await mailsTo('twice@larkspur.example');
    const firstToken = linkIn(first.text!, 'invitation').token;
    const secondToken = linkIn(second.text!, 'invitation').token;
    expect((await anon.get(`/api/invitations/by-token/${firstToken}`)).body.error.message).toMatch(/withdrawn or replaced/);
    expect((await anon.get(`/api/invitations/by-token/${secondToken}`)).body.invitation.role).toBe('formulator');

    // The owner sees the open invitation and withdraws it; another lab's owner cannot.
    const list = await owner.get('/api/invitations');
    const open = list.body.invitations.find((i: { email: string }) => i.email === 'twice@larkspur.example');
    expect(open).toMatchObject({ status: 'pending', role: 'formulator', invitedBy: 'Maya Lindqvist' });
    const expiredRow = list.body.invitations.find((i: { email: string }) => i.email === 'late@larkspur.example');
    expect(expiredRow.status).toBe('expired');
    const stranger = await t.signIn(DEMO.otherOwner);
    expect((await stranger.delete(`/api/invitations/${open.id}`)).status).toBe(404);
    expect((await stranger.get('/api/invitations')).body.invitations).toEqual([]);
    expect((await owner.delete(`/api/invitations/${open.id}`)).status).toBe(204);
    expect((await anon.get(`/api/invitations/by-token/${secondToken}`)).status).toBe(410);
  });

  it('SMTP unreachable: the owner gets a clear 503 and the link in the unsent e-mail never works', async () => {
    const down = createMailer({ db: t.db, config, log, smtp: { host: '127.0.0.1', port: await closedPort(), secure: false } });
    const app = miniApp({ mailer: down });
    const res = await app.post('/invitations').send({ email: 'nobody@larkspur.example', role: 'technician' });
    expect(res.status).toBe(503);
    expect(res.body.error.message).toMatch(/could not be sent/);
    const [row] = await t.db.select().from(invitations).where(eq(invitations.email, 'nobody@larkspur.example'));
    expect(row.revokedAt).not.toBeNull();
    await down.close();
  });
});

describe('forgot password', () => {
  it('answers the same whether or not the address exists, and mails only a real member', async () => {
    const anon = t.client();
    const known = await anon.post('/api/password-resets', { email: DEMO.formulator });
    const unknown = await anon.post('/api/password-resets', { email: 'nobody-here@larkspur.example' });
    expect(known.status).toBe(202);
    expect(unknown.status).toBe(202);
    expect(Object.keys(known.body)).toEqual(Object.keys(unknown.body));
    expect(known.body.message.replace(DEMO.formulator, 'X')).toBe(unknown.body.message.replace('nobody-here@larkspur.example', 'X'));
    await accountWorkSettled();
    expect((await mailsTo('nobody-here@larkspur.example')).length).toBe(0);
    const [mail] = await mailsTo(DEMO.formulator);
    expect(mail.subject).toContain('Larkspur Skin Studio');
    expect(mail.text).toMatch(/one hour/);
    expect(mail.html).not.toMatch(/<img|src=/i);
    const { token } = linkIn(mail.text!, 'reset-password');
    const [row] = await t.db.select().from(passwordResets).where(eq(passwordResets.tokenHash, sha256(token)));
    expect(row.expiresAt.getTime() - row.createdAt.getTime()).toBe(3_600_000);

    // The member is signed in elsewhere: the reset ends that session.
    const elsewhere = await t.signIn(DEMO.formulator);
    expect((await anon.get(`/api/password-resets/${token}`)).body.reset.email).toBe(DEMO.formulator);
    const weak = await anon.post(`/api/password-resets/${token}`, { password: 'password123' });
    expect(weak.status).toBe(400);
    expect(weak.body.error.fields.password).toMatch(/common/);
    const ok = await anon.post(`/api/password-resets/${token}`, { password: 'quiet heron at dusk' });
    expect(ok.status).toBe(200);
    expect((await elsewhere.get('/api/auth/me')).status).toBe(401);
    await expect(t.signIn(DEMO.formulator)).rejects.toThrow(/401/);
    await t.signIn(DEMO.formulator, 'quiet heron at dusk');

    // Single use.
    const reuse = await anon.post(`/api/password-resets/${token}`, { password: 'another quiet heron' });
    expect(reuse.status).toBe(410);
    expect(reuse.body.error.message).toMatch(/already been used/);
    expect((await anon.get(`/api/password-resets/${tamper(token)}`)).status).toBe(404);
    const audit = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'user'), eq(auditLog.reason, 'Password reset by e-mail link')));
    expect(audit.length).toBe(1);
    expect(JSON.stringify(audit[0].newValue)).not.toMatch(/\$2[aby]\$/);
  });

  it('an expired link is refused', async () => {
    const anon = t.client();
    await anon.post('/api/password-resets', { email: DEMO.otherTechnician });
    await accountWorkSettled();
    const { token } = linkIn((await mailsTo(DEMO.otherTechnician))[0].text!, 'reset-password');
    await t.db.update(passwordResets).set({ expiresAt: new Date(Date.now() - 1000) }).where(eq(passwordResets.tokenHash, sha256(token)));
    const res = await anon.post(`/api/password-resets/${token}`, { password: 'quiet heron at dusk' });
    expect(res.status).toBe(410);
    expect(res.body.error.message).toMatch(/expired/);
    await t.signIn(DEMO.otherTechnician, DEMO_PASSWORD);
  });

  it(`a reset storm for one address sends at most ${RESET_MAX_PER_HOUR} e-mails an hour; one IP is rate-limited`, async () => {
    const roomy = miniApp({ resetIpLimit: 100 });
    const storm = await Promise.all(Array.from({ length: 12 }, () => roomy.post('/password-resets').send({ email: DEMO.otherOwner })));
    expect(storm.every((r) => r.status === 202)).toBe(true);
    await accountWorkSettled();
    expect((await mailsTo(DEMO.otherOwner)).length).toBe(RESET_MAX_PER_HOUR);

    // Every instance counts an address in the same table (server/http/rate-limit-store.ts): start this one from zero.
    await t.db.delete(rateLimits);
    const tight = miniApp({ resetIpLimit: 3 });
    const codes: number[] = [];
    for (let i = 0; i < 5; i++) codes.push((await tight.post('/password-resets').send({ email: `someone${i}@example.com` })).status);
    expect(codes).toEqual([202, 202, 202, 429, 429]);
    await accountWorkSettled();
  });
});

describe('disabling members', () => {
  it('ends their sessions at once, refuses sign-in and resets, and can be undone', async () => {
    const techId = t.labs[0].members[DEMO.technician];
    const tech = await t.signIn(DEMO.technician);
    expect((await tech.get('/api/auth/me')).status).toBe(200);
    const sessionsOf = async () => {
      const [rows] = (await t.db.execute(sql`SELECT COUNT(*) AS n FROM sessions WHERE JSON_VALUE(data, '$.passport.user') = ${String(techId)}`)) as unknown as [{ n: number }[]];
      return Number(rows[0].n);
    };
    expect(await sessionsOf()).toBeGreaterThan(0);

    const res = await owner.post(`/api/members/${techId}/disable`);
    expect(res.status).toBe(200);
    expect(res.body.member.active).toBe(false);
    expect(await sessionsOf()).toBe(0);
    expect((await tech.get('/api/auth/me')).status).toBe(401);
    await expect(t.signIn(DEMO.technician)).rejects.toThrow(/401/);

    await t.client().post('/api/password-resets', { email: DEMO.technician });
    await accountWorkSettled();
    expect((await mailsTo(DEMO.technician)).length).toBe(0);

    // Yourself, another lab's member, a non-owner: refused.
    const ownerId = t.labs[0].members[DEMO.owner];
    const self = await owner.post(`/api/members/${ownerId}/disable`);
    expect(self.status).toBe(409);
    expect(self.body.error.fields.active).toBeTruthy();
    expect((await owner.post(`/api/members/${t.labs[1].members[DEMO.otherTechnician]}/disable`)).status).toBe(404);
    const formulator = await t.signIn(DEMO.formulator, 'quiet heron at dusk');
    expect((await formulator.post(`/api/members/${ownerId}/disable`)).status).toBe(403);

    const back = await owner.post(`/api/members/${techId}/enable`);
    expect(back.body.member.active).toBe(true);
    await t.signIn(DEMO.technician);
    const trail = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'user'), eq(auditLog.entityId, String(techId))));
    expect(trail.map((a) => a.newValue)).toEqual(expect.arrayContaining([expect.objectContaining({ active: false }), { active: true }]));
  });
});

describe('preferences', () => {
  it('a member turns reminders off and on for themselves', async () => {
    const tech = await t.signIn(DEMO.technician);
    expect((await tech.get('/api/me/preferences')).body.preferences).toEqual({ remindersEnabled: true });
    expect((await tech.patch('/api/me/preferences', { remindersEnabled: false })).body.preferences.remindersEnabled).toBe(false);
    const [row] = await t.db.select({ on: users.remindersEnabled }).from(users).where(eq(users.email, DEMO.technician));
    expect(row.on).toBe(false);
    const bad = await tech.patch('/api/me/preferences', { remindersEnabled: 'no' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.remindersEnabled).toBeTruthy();
    await tech.patch('/api/me/preferences', { remindersEnabled: true });
  });
});

describe('the Outbox', () => {
  it('lists the lab\'s own captured messages to its owners, with text and HTML', async () => {
    expect((await owner.get('/api/outbox/status')).body).toEqual({ available: true });
    const res = await owner.get('/api/outbox');
    expect(res.status).toBe(200);
    expect(res.body.messages.length).toBeGreaterThan(0);
    for (const m of res.body.messages) {
      expect(m.text).toBeTruthy();
      expect(m.html).toContain('<html');
    }
    const other = await t.signIn(DEMO.otherOwner);
    const theirs = (await other.get('/api/outbox')).body.messages as { to: string }[];
    expect(theirs.every((m) => m.to.endsWith('@copperbeech.example'))).toBe(true);
    const tech = await t.signIn(DEMO.technician);
    expect((await tech.get('/api/outbox')).status).toBe(403);
  });

  it('does not exist with real SMTP settings or in production', async () => {
    const real = loadConfig({ NODE_ENV: 'development', SMTP_HOST: 'smtp.example.com', SMTP_PORT: '587' });
    expect((await miniApp({ cfg: real }).get('/outbox')).status).toBe(404);
    expect((await miniApp({ cfg: real }).get('/outbox/status')).body).toEqual({ available: false });
    const prod = loadConfig({ NODE_ENV: 'production' });
    expect((await miniApp({ cfg: prod }).get('/outbox')).status).toBe(404);
  });

  it('keeps non-ASCII subjects and bodies intact through SMTP', async () => {
    const mailer = mailerFor({ db: t.db, config, log });
    await mailer.send({
      to: 'umlaut@larkspur.example',
      subject: 'Prüfung für Öl-in-Wasser — 45 °C ✓',
      text: 'Viskosität 12 500 mPa·s bei 25 °C\n'.repeat(20),
      html: '<p>Farbe: ΔE<sub>00</sub> = 1,8</p>',
      labId: t.labs[0].id,
    });
    const [m] = await mailsTo('umlaut@larkspur.example');
    expect(m.subject).toBe('Prüfung für Öl-in-Wasser — 45 °C ✓');
    expect(m.text).toContain('Viskosität 12 500 mPa·s bei 25 °C');
    expect(m.html).toBe('<p>Farbe: ΔE<sub>00</sub> = 1,8</p>');
  });

  it('reads what other senders write too (base64 parts, folded encoded words), with mailparser', async () => {
    const raw = Buffer.from(
      [
        'Subject: =?UTF-8?B?U3RhYmlsaXTDpHQ=?=',
        ' =?UTF-8?Q?_Woche_4?=',
        'To: a@example.com',
        'X-Keepwell-Lab: 7',
        'Content-Type: multipart/alternative; boundary="xyz"',
        '',
        '--xyz',
        'Content-Type: text/plain; charset=utf-8',
        'Content-Transfer-Encoding: base64',
        '',
        Buffer.from('Grüße aus dem Labor').toString('base64'),
        '--xyz',
        'Content-Type: text/html; charset=utf-8',
        'Content-Transfer-Encoding: quoted-printable',
        '',
        '<p>Gr=C3=BC=C3=9Fe</p>',
        '--xyz--',
        '',
      ].join('\r\n'),
    );
    const m = await readCapturedMail(raw);
    expect(m.subject).toBe('Stabilität Woche 4');
    expect(m.to).toBe('a@example.com');
    expect(m.labHeader).toBe('7');
    expect(m.text).toBe('Grüße aus dem Labor');
    expect(m.html).toBe('<p>Grüße</p>');
  });

  it('keeps "no plain-text part" and "no HTML part" apart: nothing is made from the other part', async () => {
    const htmlOnly = await readCapturedMail(
      Buffer.from(['Subject: h', 'To: a@example.com', 'Content-Type: text/html; charset=utf-8', '', '<p>Only <b>HTML</b></p>', ''].join('\r\n')),
    );
    expect(htmlOnly.text).toBeNull();
    expect(htmlOnly.html).toContain('<p>Only <b>HTML</b></p>');
    const textOnly = await readCapturedMail(
      Buffer.from(['Subject: t', 'To: a@example.com', 'Content-Type: text/plain; charset=utf-8', '', 'See https://example.com/x', ''].join('\r\n')),
    );
    expect(textOnly.html).toBeNull();
    expect(textOnly.text).toContain('See https://example.com/x');
  });
});
