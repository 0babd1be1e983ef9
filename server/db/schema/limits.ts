import { char, datetime, index, int, mysqlTable } from 'drizzle-orm/mysql-core';

/**
 * Per-address request counts for express-rate-limit (server/http/rate-limit-store.ts), shared by every
 * app instance: one row per limiter and address (SHA-256 of both), counting hits until reset_at.
 */
export const rateLimits = mysqlTable(
  'rate_limits',
  {
    keyHash: char('key_hash', { length: 64 }).primaryKey(),
    hits: int('hits', { unsigned: true }).notNull(),
    resetAt: datetime('reset_at', { mode: 'date', fsp: 3 }).notNull(),
  },
  (t) => [index('rate_limits_reset_idx').on(t.resetAt)],
);
