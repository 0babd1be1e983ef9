/**
 * One lockout for every place a password is asked for: sign-in, re-entering it to sign a decision,
 * and changing it. Wrong answers add up across all three.
 *
 * Counted per e-mail address, known or not, so that a real address and an unknown one get the same
 * answers, status and timing, also once the limit is reached. The decision is atomic: an attempt is
 * claimed (counted) in one transaction that holds the address's row lock, BEFORE the slow password
 * check; simultaneous attempts therefore queue on the row and each sees the count left by the one
 * before. A right password then clears the count. So 40 wrong passwords sent at once lock the address
 * after the first 5, and the right one sent afterwards is refused until the lock ends.
 */
import { createHash } from 'node:crypto';
import { and, eq, isNull, lt, or, sql } from 'drizzle-orm';
import type { Db, DbOrTx } from '../db/client';
import { passwordGuards, users } from '../db/schema';
import { HttpError } from '../http/errors';
import { audit } from '../services/audit';

/** After this many wrong passwords in a row the address is locked for this many minutes. */
export const LOCKOUT = { maxFailures: 5, minutes: 15 };

export function guardKey(email: string): string {
  return createHash('sha256').update(email.trim().toLowerCase()).digest('hex');
}

export type Claim =
  | { ok: true; /** This attempt reached the limit: the address is locked from now on, whatever the password. */ locksNow: boolean }
  | { ok: false; retryAfterSeconds: number };

/**
 * Claims one password attempt for `email` (counted as wrong until `passwordAccepted` clears it).
 * Refused while the address is locked. When the claim reaches the limit it locks the address and,
 * for a known account, writes a 'lockout' audit row in the same transaction.
 */
export async function claimAttempt(
  db: Db,
  email: string,
  now: Date,
  opts: { reason: string; ip?: string },
): Promise<Claim> {
  const key = guardKey(email);
  return db.transaction(async (tx) => {
    // ON DUPLICATE KEY UPDATE takes the row's exclusive lock at once (INSERT IGNORE would take a shared
    // one, and two attempts upgrading their shared locks deadlock).
    await tx
      .insert(passwordGuards)
      .values({ keyHash: key, failures: 0, updatedAt: now })
      .onDuplicateKeyUpdate({ set: { keyHash: sql`${passwordGuards.keyHash}` } });
    const [g] = await tx.select().from(passwordGuards).where(eq(passwordGuards.keyHash, key)).for('update');
    if (g.lockedUntil && g.lockedUntil > now) {
      return { ok: false, retryAfterSeconds: Math.max(1, Math.ceil((g.lockedUntil.getTime() - now.getTime()) / 1000)) };
    }
    const locksNow = g.failures + 1 >= LOCKOUT.maxFailures;
    await tx
      .update(passwordGuards)
      .set(
        locksNow
          ? { failures: 0, lockedUntil: new Date(now.getTime() + LOCKOUT.minutes * 60_000), updatedAt: now }
          : { failures: g.failures + 1, lockedUntil: null, updatedAt: now },
      )
      .where(eq(passwordGuards.keyHash, key));
    if (locksNow) {
      const [u] = await tx.select({ id: users.id, labId: users.labId }).from(users).where(eq(users.email, email.trim().toLowerCase())).limit(1);
      if (u) {
        await audit(tx, {
          labId: u.labId,
          userId: u.id,
          action: 'lockout',
          entity: 'user',
          entityId: u.id,
          newValue: { minutes: LOCKOUT.minutes, ip: opts.ip },
          reason: opts.reason,
        });
      }
    }
    return { ok: true, locksNow };
  });
}

/**
 * The password was right: the claimed attempt and earlier wrong ones no longer count, and a lock set
 * by this very attempt (it was the last one allowed) is lifted.
 */
export async function passwordAccepted(db: DbOrTx, email: string, now: Date): Promise<void> {
  await db
    .update(passwordGuards)
    .set({ failures: 0, lockedUntil: null, updatedAt: now })
    .where(eq(passwordGuards.keyHash, guardKey(email)));
}

/** Clears the count and any lock (a password reset, or an owner enabling a member again). */
export async function clearLockout(db: DbOrTx, email: string): Promise<void> {
  await db.delete(passwordGuards).where(eq(passwordGuards.keyHash, guardKey(email)));
}

/** Forgets addresses with no lock and no attempt for a day (run by the reminder job). */
export async function pruneGuards(db: DbOrTx, now: Date): Promise<void> {
  const dayAgo = new Date(now.getTime() - 86_400_000);
  await db
    .delete(passwordGuards)
    .where(and(lt(passwordGuards.updatedAt, dayAgo), or(isNull(passwordGuards.lockedUntil), lt(passwordGuards.lockedUntil, now))));
}

/** The answer to a locked address: the same words for sign-in, signing and changing a password. */
export function lockedError(retryAfterSeconds: number, field?: string): HttpError {
  const minutes = Math.ceil(retryAfterSeconds / 60);
  const message = `Too many wrong passwords for this e-mail address; try again in ${minutes} min`;
  const fields = field ? { [field]: `Locked for ${minutes} min after too many wrong passwords` } : undefined;
  return new HttpError(429, 'rate_limited', message, fields, retryAfterSeconds);
}
