/**
 * A store for express-rate-limit in MariaDB (table rate_limits), so every app instance counts an
 * address's requests together: N instances give it the same allowance as one. A fixed window per key,
 * timed by the database's clock (the instances' clocks may differ). Each increment is one atomic
 * INSERT ... ON DUPLICATE KEY UPDATE that restarts an expired window, read back in the same transaction.
 * On a Galera cluster two nodes incrementing one key at once conflict at certification and one gets a
 * deadlock error (1213): it is retried, and then counts on top of the other.
 */
import { createHash } from 'node:crypto';
import type { ClientRateLimitInfo, IncrementResponse, Options, Store } from 'express-rate-limit';
import { sql } from 'drizzle-orm';
import type { RowDataPacket } from 'mysql2/promise';
import type { Db, Pool } from '../db/client';

const DEADLOCK = 1213;
const isDeadlock = (err: unknown) => (err as { errno?: number })?.errno === DEADLOCK;

export class SqlRateLimitStore implements Store {
  /** Never counts in memory: keys are shared by every instance. */
  localKeys = false;
  private windowMs = 60_000;
  private readonly pool: Pool;

  constructor(
    db: Db | Pool,
    /** Names the limiter, so two limiters never share a count for one address. */
    readonly prefix: string,
  ) {
    this.pool = 'getConnection' in db ? db : (db as unknown as { $client: Pool }).$client;
  }

  init(options: Options): void {
    this.windowMs = options.windowMs;
  }

  private hash(key: string): string {
    return createHash('sha256').update(`${this.prefix}:${key}`).digest('hex');
  }

  async get(key: string): Promise<ClientRateLimitInfo | undefined> {
    const [rows] = await this.pool.query<RowDataPacket[]>(
      'SELECT hits, reset_at AS resetAt FROM rate_limits WHERE key_hash = ? AND reset_at > NOW(3)',
      [this.hash(key)],
    );
    return rows[0] ? { totalHits: Number(rows[0].hits), resetTime: rows[0].resetAt as Date } : undefined;
  }

  async increment(key: string): Promise<IncrementResponse> {
    const hash = this.hash(key);
    for (let attempt = 1; ; attempt++) {
      const conn = await this.pool.getConnection();
      try {
        await conn.beginTransaction();
        // In ON DUPLICATE KEY UPDATE assignments run left to right: `hits` is set while reset_at still holds the old window.
        await conn.query(
          `INSERT INTO rate_limits (key_hash, hits, reset_at) VALUES (?, 1, NOW(3) + INTERVAL ? MICROSECOND)
           ON DUPLICATE KEY UPDATE
             hits = IF(reset_at <= NOW(3), 1, hits + 1),
             reset_at = IF(reset_at <= NOW(3), VALUES(reset_at), reset_at)`,
          [hash, this.windowMs * 1000],
        );
        const [rows] = await conn.query<RowDataPacket[]>('SELECT hits, reset_at AS resetAt FROM rate_limits WHERE key_hash = ?', [hash]);
        await conn.commit();
        return { totalHits: Number(rows[0].hits), resetTime: rows[0].resetAt as Date };
      } catch (err) {
        await conn.rollback().catch(() => undefined);
        if (!isDeadlock(err) || attempt >= 5) throw err;
        await new Promise((r) => setTimeout(r, 5 + Math.random() * 20 * attempt));
      } finally {
        conn.release();
      }
    }
  }

  async decrement(key: string): Promise<void> {
    await this.withRetry('UPDATE rate_limits SET hits = GREATEST(CAST(hits AS SIGNED) - 1, 0) WHERE key_hash = ? AND reset_at > NOW(3)', [this.hash(key)]);
  }

  async resetKey(key: string): Promise<void> {
    await this.withRetry('DELETE FROM rate_limits WHERE key_hash = ?', [this.hash(key)]);
  }

  private async withRetry(statement: string, params: unknown[]): Promise<void> {
    for (let attempt = 1; ; attempt++) {
      try {
        await this.pool.query(statement, params);
        return;
      } catch (err) {
        if (!isDeadlock(err) || attempt >= 5) throw err;
        await new Promise((r) => setTimeout(r, 5 + Math.random() * 20 * attempt));
      }
    }
  }
}

/** Forgets windows that ended more than an hour ago (any instance may run it; the reminder job does). */
export async function pruneRateLimits(db: Db): Promise<number> {
  const [res] = (await db.execute(sql`DELETE FROM rate_limits WHERE reset_at < NOW(3) - INTERVAL 1 HOUR LIMIT 10000`)) as unknown as [{ affectedRows?: number }];
  return Number((res as { affectedRows?: number }).affectedRows ?? 0);
}
