/**
 * One account lockout for every place a password is asked for: sign-in, re-entering it to sign a
 * decision, and changing it. Wrong answers add up across all three.
 */
import { eq, sql } from 'drizzle-orm';
import type { Db, DbOrTx } from '../db/client';
import { users } from '../db/schema';
import { audit } from '../services/audit';

/** After this many wrong passwords in a row the account is locked for this many minutes. */
export const LOCKOUT = { maxFailures: 5, minutes: 15 };

/**
 * Counts one wrong password against `u` and locks the account when it reaches LOCKOUT.maxFailures.
 * With `lockAudit`, a lock writes a 'lockout' audit row; `alsoInTx` adds the caller's own rows to the
 * same transaction. Returns whether this failure locked the account.
 */
export async function countWrongPassword(
  db: Db,
  u: { id: number; labId: number; failedSignIns: number; lockedUntil: Date | null },
  now: Date,
  opts: { lockAudit?: { reason: string; ip?: string }; alsoInTx?: (tx: DbOrTx, locked: boolean) => Promise<void> } = {},
): Promise<boolean> {
  const lock = u.failedSignIns + 1 >= LOCKOUT.maxFailures;
  await db.transaction(async (tx) => {
    await tx
      .update(users)
      .set({
        failedSignIns: lock ? 0 : sql`${users.failedSignIns} + 1`,
        lockedUntil: lock ? new Date(now.getTime() + LOCKOUT.minutes * 60_000) : u.lockedUntil,
      })
      .where(eq(users.id, u.id));
    if (lock && opts.lockAudit) {
      await audit(tx, {
        labId: u.labId,
        userId: u.id,
        action: 'lockout',
        entity: 'user',
        entityId: u.id,
        newValue: { minutes: LOCKOUT.minutes, ip: opts.lockAudit.ip },
        reason: opts.lockAudit.reason,
      });
    }
    await opts.alsoInTx?.(tx, lock);
  });
  return lock;
}
