/**
 * Mounted at /api: invitations (owners invite; the person accepts through a
 * single-use link), "forgot password" (single-use link, one hour), changing
 * one's own password while signed in, personal preferences, the lab's
 * reminder settings, and the development Outbox.
 *
 * Tokens are 32 random bytes (base64url) sent only in e-mails; the database
 * keeps their SHA-256 hashes, so a copy of the database opens no account.
 */
import { createHash, randomBytes } from 'node:crypto';
import bcrypt from 'bcryptjs';
import { and, desc, eq, gt, isNull, sql } from 'drizzle-orm';
import { Router, type Request } from 'express';
import { rateLimit } from 'express-rate-limit';
import {
  acceptInvitationInput,
  changePasswordInput,
  forgotPasswordInput,
  inviteInput,
  preferencesInput,
  reminderSettingsInput,
  resetPasswordInput,
  type InvitationPreview,
  type InvitationSummary,
  type OutboxMessage,
} from '../../shared/schemas/account';
import { endSessionsOf, memberVersionChanged } from '../auth/end-sessions';
import { setSessionVersion } from '../auth/session-store';
import { requireMember, requireRole } from '../auth/guards';
import { claimAttempt, clearLockout, LOCKOUT, lockedError } from '../auth/lockout';
import { BCRYPT_ROUNDS, passwordProblem } from '../auth/password-policy';
import { loadMember, member, toSessionUser } from '../auth/session-user';
import type { Config } from '../config';
import type { Db } from '../db/client';
import { invitations, labs, mailOutbox, passwordResets, users } from '../db/schema';
import { HttpError, conflict, idParam, notFound, parse } from '../http/errors';
import type { Logger } from '../log';
import { appUrl, mailerFor, outboxAvailable, type Mailer } from '../mail/mailer';
import { invitationMail, invitationToExistingAccountMail, passwordResetMail } from '../mail/templates';
import { audit } from '../services/audit';
import { SqlRateLimitStore } from '../http/rate-limit-store';

export const INVITATION_HOURS = 72;
export const RESET_MINUTES = 60;
/** Reset e-mails per account per hour; more requests get the same answer and no e-mail. */
export const RESET_MAX_PER_HOUR = 3;

export interface AccountRouteDeps {
  db: Db;
  config: Config;
  log: Logger;
  /** Defaults to the shared mailer of this database (server/mail/mailer.ts). */
  mailer?: Mailer;
  /** "Forgot password" requests per IP per window. */
  resetIpLimit?: number;
  resetIpWindowMs?: number;
  /** The clock (tests move it). */
  now?: () => Date;
}

export function newToken(): { token: string; hash: string } {
  const token = randomBytes(32).toString('base64url');
  return { token, hash: hashToken(token) };
}

export function hashToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

/** A token from a link: 43 base64url characters, else it cannot be one of ours. */
function tokenParam(value: unknown): string | null {
  const s = String(value ?? '');
  return /^[A-Za-z0-9_-]{43}$/.test(s) ? s : null;
}

const gone = (message: string) => new HttpError(410, 'not_found', message);
const badLink = (what: string) =>
  notFound(`This ${what} link is not valid: check that the whole address was copied from the e-mail, or ask for a new one`);

// Background work (reset e-mails are sent after the answer, so the answer takes
// the same time whether or not the address exists). Tests await `accountWorkSettled()`.
const inFlight = new Set<Promise<unknown>>();
function background(log: Logger, what: string, work: () => Promise<unknown>) {
  const p = work()
    .catch((err) => log.error(what, err))
    .finally(() => inFlight.delete(p));
  inFlight.add(p);
}
export async function accountWorkSettled(): Promise<void> {
  while (inFlight.size) await Promise.allSettled([...inFlight]);
}

async function labOf(db: Db, labId: number) {
  const [lab] = await db.select({ id: labs.id, name: labs.name, timeZone: labs.timeZone }).from(labs).where(eq(labs.id, labId));
  if (!lab) throw notFound('No such lab');
  return lab;
}

async function checkPassword(password: string, email: string, field = 'password') {
  const problem = await passwordProblem(password, { email });
  if (problem) throw new HttpError(400, 'validation', problem, { [field]: problem });
}

function isDuplicate(err: unknown): boolean {
  const e = err as { errno?: number; cause?: { errno?: number } };
  return e?.errno === 1062 || e?.cause?.errno === 1062;
}

export function accountRoutes(deps: AccountRouteDeps): Router {
  const { db, config, log } = deps;
  const mailer = () => deps.mailer ?? mailerFor({ db, config, log });
  const now = deps.now ?? (() => new Date());
  const r = Router();
  const owner = requireRole('owner');

  // ---------- invitations (owners) ----------

  r.get('/invitations', owner, async (req, res) => {
    const me = member(req);
    const t = now();
    const since = new Date(t.getTime() - 30 * 86_400_000);
    const rows = await db
      .select({
        id: invitations.id,
        email: invitations.email,
        role: invitations.role,
        createdAt: invitations.createdAt,
        expiresAt: invitations.expiresAt,
        invitedBy: users.name,
      })
      .from(invitations)
      .leftJoin(users, eq(users.id, invitations.invitedBy))
      .where(
        and(
          eq(invitations.labId, me.labId),
          isNull(invitations.acceptedAt),
          isNull(invitations.revokedAt),
          gt(invitations.createdAt, since),
        ),
      )
      .orderBy(desc(invitations.createdAt));
    const list: InvitationSummary[] = rows.map((row) => ({
      id: row.id,
      email: row.email,
      role: row.role,
      status: row.expiresAt > t ? 'pending' : 'expired',
      invitedBy: row.invitedBy ?? null,
      createdAt: row.createdAt.toISOString(),
      expiresAt: row.expiresAt.toISOString(),
    }));
    res.json({ invitations: list });
  });

  r.post('/invitations', owner, async (req, res) => {
    const me = member(req);
    const input = parse(inviteInput, req.body);
    const t = now();
    const expiresAt = new Date(t.getTime() + INVITATION_HOURS * 3_600_000);
    const { token, hash } = newToken();
    const lab = await labOf(db, me.labId);
    const { invitationId, accountElsewhere } = await db.transaction(async (tx) => {
      const [existing] = await tx
        .select({ labId: users.labId, labName: labs.name })
        .from(users)
        .innerJoin(labs, eq(labs.id, users.labId))
        .where(eq(users.email, input.email))
        .limit(1);
      if (existing?.labId === me.labId) {
        const message = 'This person is already a member of your lab';
        throw conflict(message, { email: message });
      }
      // An account in another lab: answered like any invitation (so addresses cannot be probed); the person is told by e-mail instead.
      const accountElsewhere = existing ? { labId: existing.labId, labName: existing.labName } : null;
      // A new invitation replaces an earlier one still open for the same address.
      await tx
        .update(invitations)
        .set({ revokedAt: t })
        .where(and(eq(invitations.labId, me.labId), eq(invitations.email, input.email), isNull(invitations.acceptedAt), isNull(invitations.revokedAt)));
      const [{ id }] = await tx
        .insert(invitations)
        .values({ labId: me.labId, email: input.email, role: input.role, tokenHash: hash, invitedBy: me.id, createdAt: t, expiresAt })
        .$returningId();
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'create',
        entity: 'invitation',
        entityId: id,
        newValue: { email: input.email, role: input.role, expiresAt: expiresAt.toISOString() },
      });
      return { invitationId: id, accountElsewhere };
    });

    const mail = accountElsewhere
      ? invitationToExistingAccountMail({ labName: lab.name, inviterName: me.name, ownLabName: accountElsewhere.labName })
      : invitationMail({
          labName: lab.name,
          timeZone: lab.timeZone,
          inviterName: me.name,
          role: input.role,
          url: appUrl(config, `/invitation/${token}`),
          expiresAt,
        });
    try {
      // Filed under the person's own lab: the inviting lab's Outbox must not show where the address belongs.
      await mailer().send({ to: input.email, ...mail, labId: accountElsewhere?.labId ?? me.labId });
    } catch (err) {
      log.error(`invitation ${invitationId}: the e-mail could not be sent`, err);
      await db.update(invitations).set({ revokedAt: now() }).where(eq(invitations.id, invitationId));
      throw new HttpError(503, 'unavailable', 'The invitation e-mail could not be sent (the mail service did not answer). Nothing was sent; try again in a few minutes.');
    }
    log.info(`invitation ${invitationId} sent for lab ${me.labId}`);
    const summary: InvitationSummary = {
      id: invitationId,
      email: input.email,
      role: input.role,
      status: 'pending',
      invitedBy: me.name,
      createdAt: t.toISOString(),
      expiresAt: expiresAt.toISOString(),
    };
    res.status(201).json({ invitation: summary });
  });

  r.delete('/invitations/:id', owner, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    await db.transaction(async (tx) => {
      const [row] = await tx
        .select({ id: invitations.id, email: invitations.email, acceptedAt: invitations.acceptedAt, revokedAt: invitations.revokedAt })
        .from(invitations)
        .where(and(eq(invitations.labId, me.labId), eq(invitations.id, id)))
        .for('update');
      if (!row) throw notFound('No such invitation in your lab');
      if (row.acceptedAt) throw conflict('This invitation was already accepted: disable the member instead');
      if (row.revokedAt) return;
      await tx.update(invitations).set({ revokedAt: now() }).where(eq(invitations.id, id));
      await audit(tx, { labId: me.labId, userId: me.id, action: 'void', entity: 'invitation', entityId: id, oldValue: { email: row.email } });
    });
    res.status(204).end();
  });

  // ---------- invitations (the invited person, not signed in) ----------

  async function openInvitation(rawToken: unknown) {
    const token = tokenParam(rawToken);
    if (!token) throw badLink('invitation');
    const [row] = await db
      .select({
        id: invitations.id,
        labId: invitations.labId,
        email: invitations.email,
        role: invitations.role,
        expiresAt: invitations.expiresAt,
        acceptedAt: invitations.acceptedAt,
        revokedAt: invitations.revokedAt,
        labName: labs.name,
      })
      .from(invitations)
      .innerJoin(labs, eq(labs.id, invitations.labId))
      .where(eq(invitations.tokenHash, hashToken(token)))
      .limit(1);
    if (!row) throw badLink('invitation');
    if (row.acceptedAt) throw gone('This invitation has already been used. Sign in with the e-mail address it was sent to.');
    if (row.revokedAt) throw gone('This invitation was withdrawn or replaced by a newer one. Use the latest invitation e-mail, or ask the lab owner for a new one.');
    if (row.expiresAt <= now()) throw gone(`This invitation has expired (links last ${INVITATION_HOURS} hours). Ask the lab owner to invite you again.`);
    return row;
  }

  r.get('/invitations/by-token/:token', async (req, res) => {
    const row = await openInvitation(req.params.token);
    const preview: InvitationPreview = { email: row.email, role: row.role, labName: row.labName, expiresAt: row.expiresAt.toISOString() };
    res.json({ invitation: preview });
  });

  r.post('/invitations/by-token/:token/accept', async (req, res) => {
    const input = parse(acceptInvitationInput, req.body);
    const first = await openInvitation(req.params.token);
    await checkPassword(input.password, first.email);
    const passwordHash = await bcrypt.hash(input.password, BCRYPT_ROUNDS);
    const t = now();
    const userId = await db
      .transaction(async (tx) => {
        // Lock the invitation: of two simultaneous acceptances, the second finds it used.
        const [row] = await tx
          .select({ acceptedAt: invitations.acceptedAt, revokedAt: invitations.revokedAt, expiresAt: invitations.expiresAt })
          .from(invitations)
          .where(eq(invitations.id, first.id))
          .for('update');
        if (!row || row.acceptedAt) throw gone('This invitation has already been used. Sign in with the e-mail address it was sent to.');
        if (row.revokedAt) throw gone('This invitation was withdrawn or replaced by a newer one.');
        if (row.expiresAt <= t) throw gone(`This invitation has expired (links last ${INVITATION_HOURS} hours). Ask the lab owner to invite you again.`);
        const [taken] = await tx.select({ id: users.id }).from(users).where(eq(users.email, first.email)).limit(1);
        if (taken) throw conflict('This address already has a Keepwell account: sign in instead', { email: 'This address already has a Keepwell account' });
        const [{ id }] = await tx
          .insert(users)
          .values({ labId: first.labId, email: first.email, name: input.name, role: first.role, passwordHash })
          .$returningId();
        await tx.update(invitations).set({ acceptedAt: t, acceptedUserId: id }).where(eq(invitations.id, first.id));
        await audit(tx, {
          labId: first.labId,
          userId: id,
          action: 'create',
          entity: 'user',
          entityId: id,
          newValue: { email: first.email, name: input.name, role: first.role, invitationId: first.id },
          reason: 'Accepted an invitation',
        });
        return id;
      })
      .catch((err) => {
        if (isDuplicate(err)) throw conflict('This address already has a Keepwell account: sign in instead', { email: 'This address already has a Keepwell account' });
        throw err;
      });
    log.info(`invitation ${first.id} accepted: member ${userId} joined lab ${first.labId}`);
    // Signed in at once with the password just chosen, as a sign-in would (a new session id).
    const signedIn = await loadMember(db, userId);
    if (signedIn) {
      await db.update(users).set({ lastSignInAt: now() }).where(eq(users.id, userId));
      await new Promise<void>((resolve, reject) => req.logIn(signedIn, (err) => (err ? reject(err) : resolve())));
    }
    res.status(201).json({ member: { id: userId, email: first.email, name: input.name, role: first.role }, user: signedIn ? toSessionUser(signedIn) : null });
  });

  // ---------- forgot password ----------

  const resetIpLimiter = rateLimit({
    windowMs: deps.resetIpWindowMs ?? 15 * 60_000,
    limit: deps.resetIpLimit ?? 10,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    // Counted in MariaDB, so every instance shares one allowance per address.
    store: new SqlRateLimitStore(db, 'password-reset'),
    handler: (req, _res, next) => {
      log.warn(`password reset rate limit reached for ip ${req.ip}`);
      next(new HttpError(429, 'rate_limited', 'Too many password reset requests from this address; wait a few minutes and try again'));
    },
  });

  async function issueReset(emailAddress: string, ip: string | undefined) {
    const t = now();
    const { token, hash } = newToken();
    const issued = await db.transaction(async (tx) => {
      // Locking the member's row serialises a storm of requests for one address.
      const [u] = await tx
        .select({ id: users.id, name: users.name, labId: users.labId, active: users.active })
        .from(users)
        .where(eq(users.email, emailAddress))
        .for('update');
      if (!u || !u.active) return null;
      const [{ recent }] = await tx
        .select({ recent: sql<number>`count(*)` })
        .from(passwordResets)
        .where(and(eq(passwordResets.userId, u.id), gt(passwordResets.createdAt, new Date(t.getTime() - 3_600_000))));
      if (Number(recent) >= RESET_MAX_PER_HOUR) {
        log.warn(`password reset for member ${u.id} not sent: ${RESET_MAX_PER_HOUR} already sent this hour (ip ${ip})`);
        return null;
      }
      await tx.insert(passwordResets).values({
        userId: u.id,
        tokenHash: hash,
        requestIp: ip?.slice(0, 64) ?? null,
        createdAt: t,
        expiresAt: new Date(t.getTime() + RESET_MINUTES * 60_000),
      });
      return u;
    });
    if (!issued) return;
    const lab = await labOf(db, issued.labId);
    const mail = passwordResetMail({ labName: lab.name, name: issued.name, url: appUrl(config, `/reset-password/${token}`) });
    await mailer().send({ to: emailAddress, ...mail, labId: issued.labId });
    log.info(`password reset e-mail sent to member ${issued.id}`);
  }

  r.post('/password-resets', resetIpLimiter, (req, res) => {
    const input = parse(forgotPasswordInput, req.body);
    background(log, 'password reset request failed', () => issueReset(input.email, req.ip));
    res.status(202).json({
      message: `If ${input.email} belongs to a Keepwell account, an e-mail with a link to choose a new password is on its way. The link works once, for one hour.`,
    });
  });

  async function openReset(rawToken: unknown) {
    const token = tokenParam(rawToken);
    if (!token) throw badLink('password reset');
    const [row] = await db
      .select({
        id: passwordResets.id,
        userId: passwordResets.userId,
        expiresAt: passwordResets.expiresAt,
        usedAt: passwordResets.usedAt,
        email: users.email,
        active: users.active,
        labId: users.labId,
        labName: labs.name,
      })
      .from(passwordResets)
      .innerJoin(users, eq(users.id, passwordResets.userId))
      .innerJoin(labs, eq(labs.id, users.labId))
      .where(eq(passwordResets.tokenHash, hashToken(token)))
      .limit(1);
    if (!row) throw badLink('password reset');
    if (row.usedAt) throw gone('This link has already been used. If you still cannot sign in, ask for a new link.');
    if (row.expiresAt <= now()) throw gone(`This link has expired (links last ${RESET_MINUTES} minutes). Ask for a new one.`);
    if (!row.active) throw gone('This account is disabled. Ask an owner of your lab to enable it again.');
    return row;
  }

  r.get('/password-resets/:token', async (req, res) => {
    const row = await openReset(req.params.token);
    res.json({ reset: { email: row.email, labName: row.labName, expiresAt: row.expiresAt.toISOString() } });
  });

  r.post('/password-resets/:token', async (req, res) => {
    const input = parse(resetPasswordInput, req.body);
    const first = await openReset(req.params.token);
    await checkPassword(input.password, first.email);
    const passwordHash = await bcrypt.hash(input.password, BCRYPT_ROUNDS);
    const t = now();
    await db.transaction(async (tx) => {
      const [row] = await tx.select({ usedAt: passwordResets.usedAt }).from(passwordResets).where(eq(passwordResets.id, first.id)).for('update');
      if (!row || row.usedAt) throw gone('This link has already been used. If you still cannot sign in, ask for a new link.');
      await tx.update(users).set({ passwordHash }).where(eq(users.id, first.userId));
      await clearLockout(tx, first.email);
      // This link and every other open link of the member stop working.
      await tx.update(passwordResets).set({ usedAt: t }).where(and(eq(passwordResets.userId, first.userId), isNull(passwordResets.usedAt)));
      await memberVersionChanged(tx, first.userId, 'none');
      await endSessionsOf(tx, first.userId);
      await audit(tx, {
        labId: first.labId,
        userId: first.userId,
        action: 'update',
        entity: 'user',
        entityId: first.userId,
        newValue: { password: 'changed' },
        reason: 'Password reset by e-mail link',
      });
    });
    log.info(`member ${first.userId} chose a new password through a reset link`);
    res.json({ message: 'Your password has been changed. Sign in with the new password.', email: first.email });
  });

  // ---------- changing one's own password (signed in) ----------

  /**
   * The current password is checked like a sign-in: wrong answers count towards the
   * same lockout (auth/lockout.ts), and a locked account cannot change it.
   * The new password follows the reset rules. This session stays; every other session
   * of the member ends, and open reset links stop working.
   */
  r.post('/account/password', requireMember, async (req, res) => {
    const me = member(req);
    const input = parse(changePasswordInput, req.body);
    const [u] = await db.select().from(users).where(eq(users.id, me.id));
    // The rules for the new password first: a refused new password costs no attempt.
    await checkPassword(input.newPassword, u.email, 'newPassword');
    const t = now();
    const claim = await claimAttempt(db, u.email, t, {
      reason: `${LOCKOUT.maxFailures} wrong passwords in a row (sign-in, signing or changing the password)`,
      ip: req.ip,
    });
    if (!claim.ok) throw lockedError(claim.retryAfterSeconds, 'currentPassword');
    if (!(await bcrypt.compare(input.currentPassword, u.passwordHash))) {
      log.warn(`password change refused for member ${me.id}: wrong current password${claim.locksNow ? ' (locked)' : ''} (ip ${req.ip})`);
      throw new HttpError(403, 'forbidden', 'The current password is wrong: the password was not changed', { currentPassword: 'Wrong password' });
    }
    const passwordHash = await bcrypt.hash(input.newPassword, BCRYPT_ROUNDS);
    const ended = await db.transaction(async (tx) => {
      await tx.update(users).set({ passwordHash }).where(eq(users.id, me.id));
      await clearLockout(tx, u.email);
      // A reset link asked for earlier would otherwise still set a password.
      await tx.update(passwordResets).set({ usedAt: t }).where(and(eq(passwordResets.userId, me.id), isNull(passwordResets.usedAt)));
      // This session carries on with the new version; any other is refused from its next request.
      const version = await memberVersionChanged(tx, me.id, { only: req.sessionID });
      setSessionVersion(req.session, me.id, version);
      const n = await endSessionsOf(tx, me.id, { except: req.sessionID });
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'user',
        entityId: me.id,
        newValue: { password: 'changed', otherSessionsEnded: n },
        reason: 'Password changed by the member while signed in',
      });
      return n;
    });
    log.info(`member ${me.id} changed their password; ${ended} other session(s) ended`);
    res.json({
      message: ended ? `Your password has been changed. ${ended === 1 ? 'Your other session was' : `Your ${ended} other sessions were`} signed out.` : 'Your password has been changed.',
      otherSessionsEnded: ended,
    });
  });

  // ---------- the member's own preferences ----------

  r.get('/me/preferences', requireMember, async (req, res) => {
    const me = member(req);
    const [row] = await db.select({ remindersEnabled: users.remindersEnabled }).from(users).where(eq(users.id, me.id));
    res.json({ preferences: { remindersEnabled: row?.remindersEnabled ?? true } });
  });

  r.patch('/me/preferences', requireMember, async (req, res) => {
    const me = member(req);
    const input = parse(preferencesInput, req.body);
    await db.transaction(async (tx) => {
      const [before] = await tx.select({ remindersEnabled: users.remindersEnabled }).from(users).where(eq(users.id, me.id)).for('update');
      if (before.remindersEnabled === input.remindersEnabled) return;
      await tx.update(users).set({ remindersEnabled: input.remindersEnabled }).where(eq(users.id, me.id));
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'user',
        entityId: me.id,
        oldValue: before,
        newValue: { remindersEnabled: input.remindersEnabled },
      });
    });
    res.json({ preferences: { remindersEnabled: input.remindersEnabled } });
  });

  // ---------- the lab's reminder settings (owners) ----------

  r.patch('/lab/reminder-settings', owner, async (req, res) => {
    const me = member(req);
    const input = parse(reminderSettingsInput, req.body);
    const lab = await db.transaction(async (tx) => {
      const [before] = await tx
        .select({ timeZone: labs.timeZone, reminderHour: labs.reminderHour })
        .from(labs)
        .where(eq(labs.id, me.labId))
        .for('update');
      if (before.timeZone !== input.timeZone || before.reminderHour !== input.reminderHour) {
        await tx.update(labs).set(input).where(eq(labs.id, me.labId));
        await audit(tx, { labId: me.labId, userId: me.id, action: 'update', entity: 'lab', entityId: me.labId, oldValue: before, newValue: input });
      }
      return input;
    });
    res.json({ lab });
  });

  // ---------- the development Outbox (owners; only with the fake SMTP service) ----------

  r.get('/outbox/status', owner, (_req, res) => {
    res.json({ available: outboxAvailable(config) });
  });

  r.get('/outbox', owner, async (req: Request, res) => {
    if (!outboxAvailable(config)) throw notFound('No such API route');
    const me = member(req);
    const rows = await db
      .select()
      .from(mailOutbox)
      .where(eq(mailOutbox.labId, me.labId))
      .orderBy(desc(mailOutbox.receivedAt), desc(mailOutbox.id))
      .limit(100);
    const messages: OutboxMessage[] = rows.map((m) => ({
      id: m.id,
      to: m.to,
      from: m.from,
      subject: m.subject,
      text: m.text,
      html: m.html,
      messageId: m.messageId,
      rawSize: m.rawSize,
      receivedAt: m.receivedAt.toISOString(),
    }));
    res.json({ messages });
  });

  return r;
}
