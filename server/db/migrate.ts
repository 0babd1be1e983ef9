import { fileURLToPath } from 'node:url';
import { migrate } from 'drizzle-orm/mysql2/migrator';
import { createDb, createPool, type DbTarget } from './client';

export const MIGRATIONS_FOLDER = fileURLToPath(new URL('./migrations', import.meta.url));

/** Applies the committed migrations with a (possibly privileged) connection. */
export async function runMigrations(target: DbTarget): Promise<void> {
  const pool = createPool(target, 2);
  try {
    await migrate(createDb(pool), { migrationsFolder: MIGRATIONS_FOLDER });
  } finally {
    await pool.end();
  }
}
