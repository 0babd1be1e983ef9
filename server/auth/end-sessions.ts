import { sql } from 'drizzle-orm';
import type { DbOrTx } from '../db/client';

/**
 * Ends every session of a member at once (by the sessions.user_id index).
 * (The session store also refuses inactive members and sessions older than a change, on any instance.)
 * `except` keeps one session (by its id, `req.sessionID`): the one changing its own password.
 */
export async function endSessionsOf(db: DbOrTx, userId: number, options: { except?: string } = {}): Promise<number> {
  const keep = options.except ? sql` AND session_id <> ${options.except}` : sql``;
  const [res] = (await db.execute(sql`DELETE FROM sessions WHERE user_id = ${userId}${keep}`)) as unknown as [{ affectedRows: number }];
  return res?.affectedRows ?? 0;
}

/**
 * A change of a member's role, access or password: bumps users.version, so every session issued
 * before it is refused on its next request, on every instance (server/auth/session-store.ts).
 * `keep`: the sessions that carry on ('all' for a role change, or one session id: the member changing
 * their own password) get the new version in the same transaction; 'none' keeps none.
 * Returns the new version. Call it inside the transaction that makes the change.
 */
export async function memberVersionChanged(db: DbOrTx, userId: number, keep: 'all' | 'none' | { only: string }): Promise<number> {
  await db.execute(sql`UPDATE users SET version = version + 1 WHERE id = ${userId}`);
  const [rows] = (await db.execute(sql`SELECT version FROM users WHERE id = ${userId}`)) as unknown as [{ version: number }[]];
  const version = Number(rows[0]?.version);
  if (keep !== 'none') {
    const only = keep === 'all' ? sql`` : sql` AND session_id = ${keep.only}`;
    await db.execute(sql`UPDATE sessions SET user_version = ${version} WHERE user_id = ${userId}${only}`);
  }
  return version;
}
