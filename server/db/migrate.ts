import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { migrate } from 'drizzle-orm/mysql2/migrator';
import type { RowDataPacket } from 'mysql2/promise';
import { createDb, createPool, type DbTarget, type Pool } from './client';
import { runDataMigrations } from './data-migrations';

export const MIGRATIONS_FOLDER = fileURLToPath(new URL('./migrations', import.meta.url));

/** Applies the committed migrations with a (possibly privileged) connection. */
export async function runMigrations(target: DbTarget): Promise<void> {
  const pool = createPool(target, 2);
  try {
    const db = createDb(pool);
    await migrate(db, { migrationsFolder: MIGRATIONS_FOLDER });
    await runDataMigrations(db);
  } finally {
    await pool.end();
  }
}

/** The newest migration this code knows (drizzle records each applied one with its folder time). */
export function latestMigration(): { tag: string; when: number } {
  const journal = JSON.parse(readFileSync(join(MIGRATIONS_FOLDER, 'meta', '_journal.json'), 'utf8')) as { entries: { tag: string; when: number }[] };
  const last = journal.entries[journal.entries.length - 1];
  return { tag: last.tag, when: last.when };
}

/**
 * For processes that must not change the schema (the job runner with the app's restricted account):
 * checks that every migration of this code has been applied, and explains what to do when not.
 */
export async function assertSchemaCurrent(pool: Pool): Promise<void> {
  const want = latestMigration();
  let applied: number | null = null;
  try {
    const [rows] = await pool.query<RowDataPacket[]>('SELECT MAX(created_at) AS applied FROM __drizzle_migrations');
    applied = rows[0]?.applied == null ? null : Number(rows[0].applied);
  } catch (err) {
    if ((err as { code?: string }).code !== 'ER_NO_SUCH_TABLE') throw err;
  }
  if (applied == null || applied < want.when) {
    throw new Error(
      `The database schema is older than this code (it needs migration ${want.tag}). ` +
        'Start the app once (npm start, which applies migrations with MIGRATION_DATABASE_URL or DATABASE_URL), then run the job again.',
    );
  }
}
