import { sql } from 'drizzle-orm';
import type { DbOrTx } from '../db/client';

/**
 * Ends every session of a member at once: express-mysql-session keeps the
 * session as JSON in `sessions.data`, with passport's `"passport":{"user":ID}`.
 * (The session deserializer also refuses inactive members, on any instance.)
 * `except` keeps one session (by its id, `req.sessionID`): the one changing its own password.
 */
export async function endSessionsOf(db: DbOrTx, userId: number, options: { except?: string } = {}): Promise<number> {
  const keep = options.except ? sql` AND session_id <> ${options.except}` : sql``;
  const [res] = (await db.execute(
    sql`DELETE FROM sessions WHERE JSON_VALUE(data, '$.passport.user') = ${String(userId)}${keep}`,
  )) as unknown as [{ affectedRows: number }];
  return res?.affectedRows ?? 0;
}
