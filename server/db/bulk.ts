/**
 * A second, small pool for bulk writes (a chamber log: half a million rows in 400 kB INSERTs) over
 * TCP on 127.0.0.1, when the app otherwise reaches its own MariaDB over the Unix socket, where short
 * queries cost less. Measured with `BENCH_ONLY=chamber npm run bench` (2 workers, a year of minute
 * readings, runs alternated on one 2-core machine): 12.1 and 13.8 s with the import over the socket,
 * 8.8 and 9.3 s with it over TCP. Without a bulk pool, bulk writes use the app's own pool.
 */
import type { Db, Pool } from './client';
import { poolOf } from './prepared';

const bulkPools = new WeakMap<Db, Pool>();

/** Bulk writes through `db` go to `pool` from now on. */
export function useBulkPool(db: Db, pool: Pool): void {
  bulkPools.set(db, pool);
}

/** The pool for bulk writes through `db`: its bulk pool when one is set, else its own. */
export function bulkPoolOf(db: Db): Pool {
  return bulkPools.get(db) ?? poolOf(db);
}

/** Connections of a bulk pool: one import at a time per connection, few at once. */
export const BULK_POOL_SIZE = 4;
