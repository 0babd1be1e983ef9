import mysql from 'mysql2/promise';
import { drizzle, type MySql2Database } from 'drizzle-orm/mysql2';
import * as schema from './schema';
import type { ConnectionTarget } from './mariadb';

export type Db = MySql2Database<typeof schema>;
export type Pool = mysql.Pool;

/** A target is either a mysql:// URL or a host/socket object from the launcher. */
export type DbTarget = string | ConnectionTarget;

/**
 * `hosts` ("host:port,host:port", DATABASE_HOSTS): servers of one cluster, tried in order. New
 * connections go to the current one; when it refuses or cannot be reached, to the next.
 */
export function createPool(target: DbTarget, connectionLimit = 20, hosts?: string): Pool {
  const common = {
    connectionLimit,
    timezone: 'Z',
    dateStrings: false as const,
    supportBigNumbers: true,
    decimalNumbers: false,
    charset: 'utf8mb4_unicode_ci',
    waitForConnections: true,
    // No async stack capture on every query (Error.captureStackTrace per call: a large share of a short request's CPU).
    trace: false,
  };
  const pool =
    typeof target === 'string'
      ? mysql.createPool({ uri: target, ...common, ...(hosts ? { connectTimeout: 5000 } : {}) })
      : mysql.createPool({ ...target, ...common });
  if (hosts) failOver(pool, hosts);
  return pool;
}

/** Errors of opening a connection that mean "try the next server". */
const CONNECT_FAILURES = new Set(['ECONNREFUSED', 'ETIMEDOUT', 'EHOSTUNREACH', 'ENETUNREACH', 'ENOTFOUND', 'EAI_AGAIN', 'ECONNRESET', 'PROTOCOL_CONNECTION_LOST', 'ER_CON_COUNT_ERROR', 'ER_SERVER_SHUTDOWN']);

interface CorePool {
  _createConnectionConfig(): { host?: string; port?: number };
  getConnection(cb: (err: NodeJS.ErrnoException | null, conn?: unknown) => void): void;
}

/** Failover for new connections of a mysql2 pool (version 3.x: its core pool's connection factory). */
function failOver(pool: Pool, list: string): void {
  const hosts = list.split(',').map((h) => {
    const i = h.lastIndexOf(':');
    return { host: h.slice(0, i).replace(/^\[|\]$/g, ''), port: Number(h.slice(i + 1)) };
  });
  const core = (pool as unknown as { pool: CorePool }).pool;
  let current = 0;
  const config = core._createConnectionConfig.bind(core);
  core._createConnectionConfig = () => Object.assign(config(), hosts[current]);
  const get = core.getConnection.bind(core);
  core.getConnection = (cb) => {
    let tries = 0;
    const attempt = () => {
      const used = current;
      get((err, conn) => {
        if (err && CONNECT_FAILURES.has(err.code ?? '') && ++tries < hosts.length) {
          // Only the first of many requests failing on one server moves everyone on.
          if (current === used) current = (used + 1) % hosts.length;
          return attempt();
        }
        cb(err, conn);
      });
    };
    attempt();
  };
}

const DEADLOCK = 1213;
export function isDeadlock(err: unknown): boolean {
  for (let e = err as { errno?: number; cause?: unknown } | undefined, d = 0; e && d < 4; e = e.cause as typeof e, d++) if (e.errno === DEADLOCK) return true;
  return false;
}

/**
 * Transactions that fail with a deadlock (1213) are run again, up to 10 times in all, after a random
 * pause that doubles each time: on one server two transactions waiting on each other; on a Galera
 * cluster also a transaction that lost certification to a conflicting one committed on another node
 * (row locks are not shared between nodes, so busy rows such as one checkpoint recorded from several
 * instances at once conflict often). Transaction bodies therefore do database work only (files and
 * e-mail happen before or after).
 */
export function createDb(pool: Pool): Db {
  const db = drizzle(pool, { schema, mode: 'default' });
  const transaction = db.transaction.bind(db);
  db.transaction = (async (fn, config) => {
    for (let attempt = 1; ; attempt++) {
      try {
        return await transaction(fn, config);
      } catch (err) {
        if (!isDeadlock(err) || attempt >= 10) throw err;
        await new Promise((r) => setTimeout(r, Math.random() * Math.min(2000, 20 * 2 ** attempt)));
      }
    }
  }) as Db['transaction'];
  return db;
}

/** The transaction handle type, for repositories that accept either. */
export type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];
export type DbOrTx = Db | Tx;
