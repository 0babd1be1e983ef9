/**
 * Prepared statements for hot paths: mysql2's `execute` (binary protocol; each connection prepares a
 * statement once and reuses it), on the pool behind a Drizzle handle, with rows as plain objects.
 * DATETIME columns come back as Date (the pool's time zone is UTC), DECIMAL as strings, BIGINT as
 * numbers while they are safe integers.
 */
import type { RowDataPacket } from 'mysql2';
import type { Db, DbOrTx, Pool } from './client';

/** The mysql2 pool behind a Drizzle handle (not a transaction's). */
export function poolOf(db: Db): Pool {
  return (db as unknown as { $client: Pool }).$client;
}

/** Runs one prepared statement and returns its rows. */
export async function rows<T>(db: Db, statement: string, params: (string | number | boolean | Date | null)[]): Promise<T[]> {
  const [r] = await poolOf(db).execute<RowDataPacket[]>(statement, params);
  return r as unknown as T[];
}

/** A statement and its values, for {@link listRows}. */
export interface Statement {
  sql: string;
  values: unknown[];
}

/**
 * Runs one statement whose values include lists of varying length (an array value expands in
 * `IN (?)`, mysql2's client-side formatting) and returns its rows as plain objects. Sent as text, not
 * prepared: a server-side statement per list length would pile up on every connection. A list must
 * not be empty (`IN ()` is not SQL).
 */
export async function listRows<T>(db: Db, s: Statement): Promise<T[]> {
  const [r] = await poolOf(db).query<RowDataPacket[]>(s.sql, s.values);
  return r as unknown as T[];
}

type Executable<R> = { execute(values?: Record<string, unknown>): Promise<R> };

/**
 * A Drizzle query built once: its SQL text and result mapping are made on the first call and reused
 * (building a select is most of a short query's CPU cost). Each call runs it on the connection of the
 * handle it is given (the pool, or a transaction's connection) with that call's values for the
 * query's `sql.placeholder(name)`s. For queries of a fixed shape only (no lists of varying length).
 */
export function reusable<R>(build: (db: DbOrTx) => { prepare(): Executable<R> }): (db: DbOrTx, values: Record<string, unknown>) => Promise<R> {
  let prepared: Executable<R> | null = null;
  return (db, values) => {
    prepared ??= build(db).prepare();
    const client = (db as unknown as { session: { client: unknown } }).session.client;
    return (Object.create(prepared, { client: { value: client } }) as Executable<R>).execute(values);
  };
}
