/**
 * Start-up shared by `npm start`, the job runner and the benchmark: find or
 * launch the database, migrate, grant, and open the app's pool.
 */
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type { Config } from './config';
import { createDb, createPool, type Db, type DbTarget, type Pool } from './db/client';
import { BULK_POOL_SIZE, useBulkPool } from './db/bulk';
import { grantAppAccount } from './db/grants';
import { launchMariaDb, type LaunchedMariaDb } from './db/mariadb';
import { assertSchemaCurrent, runMigrations } from './db/migrate';
import { databaseIsEmpty, seedDemo } from './demo/seed';
import { openFileStore, type FileStore } from './files';
import type { Logger } from './log';

export interface Database {
  db: Db;
  pool: Pool;
  launched?: LaunchedMariaDb;
  close(): Promise<void>;
}

/**
 * `migrate: false` (the job runner): never change the schema of an existing database, only check that
 * it is current, so the app's restricted account (no DDL rights) is enough.
 */
export async function openDatabase(config: Config, log: Logger, opts: { fast?: boolean; migrate?: boolean } = {}): Promise<Database> {
  let launched: LaunchedMariaDb | undefined;
  let target: DbTarget;
  if (config.DATABASE_URL) {
    if (opts.migrate !== false) await runMigrations(config.MIGRATION_DATABASE_URL ?? config.DATABASE_URL);
    target = config.DATABASE_URL;
  } else {
    launched = await launchMariaDb({
      baseDir: join(config.DATA_DIR, 'mariadb'),
      database: 'keepwell',
      fast: opts.fast,
      log: (l) => log.info(l),
    });
    try {
      await runMigrations(launched.admin);
      await grantAppAccount(launched.admin, launched.app.user);
    } catch (err) {
      await launched.stop();
      throw err;
    }
    // Over the socket: each query costs less than over TCP on 127.0.0.1 (the account exists for both).
    target = { ...launched.app, host: undefined, port: undefined, socketPath: launched.admin.socketPath };
  }
  const pool = createPool(target, undefined, config.DATABASE_HOSTS);
  await warnAboutCluster(pool, log);
  if (config.DATABASE_URL && opts.migrate === false) {
    try {
      await assertSchemaCurrent(pool);
    } catch (err) {
      await pool.end();
      throw err;
    }
  }
  const db = createDb(pool);
  // Bulk writes over TCP beside the socket (db/bulk.ts): the launched server's own address, or the
  // one the primary hands its workers.
  const bulkTarget = launched ? launched.app : process.env.KW_BULK_DATABASE_URL;
  const bulk = bulkTarget ? createPool(bulkTarget, BULK_POOL_SIZE) : null;
  if (bulk) useBulkPool(db, bulk);
  return {
    db,
    pool,
    launched,
    async close() {
      await bulk?.end();
      await pool.end();
      await launched?.stop();
    },
  };
}

/**
 * On a Galera node, reads must wait for writes already committed on other nodes (wsrep_sync_wait=1):
 * otherwise a session made through one instance may not be seen by the next request on another.
 */
async function warnAboutCluster(pool: Pool, log: Logger): Promise<void> {
  try {
    const [rows] = (await pool.query('SELECT @@wsrep_on AS galera, @@wsrep_sync_wait AS syncWait')) as unknown as [{ galera: number; syncWait: number }[]];
    const r = rows[0];
    if (r && Number(r.galera) === 1 && (Number(r.syncWait) & 1) === 0) {
      log.warn('This MariaDB is a Galera node with wsrep_sync_wait=0: set wsrep_sync_wait=1 on every node (README, "Running on more than one machine"), or a request may miss what another instance just wrote.');
    }
  } catch {
    // Not MariaDB with wsrep variables, or not reachable yet: nothing to say.
  }
}

/** SESSION_SECRET, or one generated once and kept in the data folder. */
export function sessionSecret(config: Config): string {
  if (config.SESSION_SECRET) return config.SESSION_SECRET;
  const dir = resolve(config.DATA_DIR);
  const file = join(dir, 'session-secret');
  if (existsSync(file)) return readFileSync(file, 'utf8').trim();
  mkdirSync(dir, { recursive: true });
  const secret = randomBytes(32).toString('base64url');
  writeFileSync(file, secret, { mode: 0o600 });
  return secret;
}

/**
 * Photos and chamber-log files (DATA_DIR/uploads, or the bucket of S3_BUCKET, checked by a write, read
 * and delete; a failed check stops the process with its message), then the demo labs into an empty
 * database when LOAD_DEMO is auto.
 */
export async function openFilesAndDemo(config: Config, log: Logger, database: Database): Promise<FileStore> {
  const files = await openFileStore(config).catch(async (err: Error) => {
    log.error(err.message);
    await database.close();
    process.exit(1);
  });
  if (config.LOAD_DEMO === 'auto' && (await databaseIsEmpty(database.db))) {
    await seedDemo(database.db, { content: 'full', files });
    log.info('Loaded the demo labs (invented data).');
  }
  return files;
}
