import mysql from 'mysql2/promise';
import { drizzle, type MySql2Database } from 'drizzle-orm/mysql2';
import * as schema from './schema';
import type { ConnectionTarget } from './mariadb';

export type Db = MySql2Database<typeof schema>;
export type Pool = mysql.Pool;

/** A target is either a mysql:// URL or a host/socket object from the launcher. */
export type DbTarget = string | ConnectionTarget;

export function createPool(target: DbTarget, connectionLimit = 20): Pool {
  const common = {
    connectionLimit,
    timezone: 'Z',
    dateStrings: false as const,
    supportBigNumbers: true,
    decimalNumbers: false,
    charset: 'utf8mb4_unicode_ci',
    waitForConnections: true,
  };
  return typeof target === 'string'
    ? mysql.createPool({ uri: target, ...common })
    : mysql.createPool({ ...target, ...common });
}

export function createDb(pool: Pool): Db {
  return drizzle(pool, { schema, mode: 'default' });
}

/** The transaction handle type, for repositories that accept either. */
export type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];
export type DbOrTx = Db | Tx;
