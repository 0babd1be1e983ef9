/** Reading and setting an address's wrong-password count in tests (server/auth/lockout.ts). */
import { eq } from 'drizzle-orm';
import type { DbOrTx } from '../../server/db/client';
import { passwordGuards } from '../../server/db/schema';
import { clearLockout, guardKey } from '../../server/auth/lockout';

export async function setWrongPasswords(db: DbOrTx, email: string, failures: number): Promise<void> {
  await db
    .insert(passwordGuards)
    .values({ keyHash: guardKey(email), failures, lockedUntil: null, updatedAt: new Date() })
    .onDuplicateKeyUpdate({ set: { failures, lockedUntil: null } });
}

export async function wrongPasswords(db: DbOrTx, email: string): Promise<{ failures: number; locked: boolean }> {
  const [g] = await db.select().from(passwordGuards).where(eq(passwordGuards.keyHash, guardKey(email)));
  return { failures: g?.failures ?? 0, locked: Boolean(g?.lockedUntil && g.lockedUntil > new Date()) };
}

export const unlock = clearLockout;
