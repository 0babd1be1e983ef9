/**
 * `npm start`: serves from WORKERS processes (default: one per core) with Node's cluster module.
 *
 * This primary launches MariaDB (unless DATABASE_URL is set), migrates, loads the demo, keeps the
 * session secret, runs the reminder job (the database claim makes each reminder go out once, whoever
 * runs it), then forks the workers: each is server/main.ts with KW_ROLE=worker, a stateless copy of
 * the app on a pool of its own, and the cluster module shares the port between them. A worker that
 * dies is replaced. Ctrl-C (or SIGTERM to this process) stops the workers, then MariaDB.
 * WORKERS=1 runs server/main.ts in this process instead, as `npm run dev:server` does.
 */
import cluster, { type Worker } from 'node:cluster';
import { availableParallelism } from 'node:os';
import { performance } from 'node:perf_hooks';
import { fileURLToPath } from 'node:url';
import { openDatabase, openFilesAndDemo, sessionSecret } from './boot';
import { loadConfig, type Config } from './config';
import type { ConnectionTarget } from './db/mariadb';
import { DEMO_LABS, DEMO_PASSWORD } from './demo/people';
import { createLogger } from './log';
import { mailerFor, outboxAvailable } from './mail/mailer';
import { startReminderJob, type ReminderJob } from '../jobs/reminders';

/** How many workers: WORKERS, or one per core. */
export function workerCount(config: Pick<Config, 'WORKERS'>): number {
  return config.WORKERS ?? Math.max(1, availableParallelism());
}

/** The app account's URL for the workers; over the launched server's socket when it has one (mysql2 reads `socketPath`). */
export function databaseUrl(t: ConnectionTarget): string {
  const auth = `${encodeURIComponent(t.user)}:${encodeURIComponent(t.password)}`;
  if (t.socketPath) return `mysql://${auth}@localhost/${encodeURIComponent(t.database)}?socketPath=${encodeURIComponent(t.socketPath)}`;
  return `mysql://${auth}@${t.host ?? '127.0.0.1'}:${t.port ?? 3306}/${encodeURIComponent(t.database)}`;
}

const config = loadConfig();
const count = workerCount(config);

if (count === 1) {
  await import('./main');
} else {
  await runPrimary();
}

async function runPrimary(): Promise<void> {
  const t0 = performance.now();
  const log = createLogger();
  const database = await openDatabase(config, log);
  const { db } = database;
  // The primary checks the file store and loads the demo once; the workers only open the store.
  await openFilesAndDemo(config, log, database);
  // Made here once, so the workers read the same secret instead of racing to create it.
  sessionSecret(config);

  const launched = database.launched;
  const url = config.DATABASE_URL ?? databaseUrl({ ...launched!.app, socketPath: launched!.admin.socketPath });
  // Chamber-log imports go over TCP beside the socket (db/bulk.ts); an external DATABASE_URL is used as given.
  const bulk = config.DATABASE_URL ? {} : { KW_BULK_DATABASE_URL: databaseUrl(launched!.app) };
  const env = { KW_ROLE: 'worker', DATABASE_URL: url, LOAD_DEMO: 'never', JOBS_IN_APP: 'false', ...bulk };
  cluster.setupPrimary({ exec: fileURLToPath(new URL('./main.ts', import.meta.url)), execArgv: process.execArgv });

  const mailer = mailerFor({ db, config, log });
  let reminderJob: ReminderJob | null = null;
  let stopping = false;
  let started = false;
  const recentDeaths: number[] = [];
  const fork = (): Worker => cluster.fork(env);
  cluster.on('exit', (w, code, signal) => {
    if (stopping || code === 0) return;
    if (!started) {
      // It said why (a port in use, the database gone ...): stop rather than retry.
      log.error(`worker ${w.process.pid} stopped during start-up (${signal ?? `code ${code}`})`);
      void shutdown('start-up failed', 1);
      return;
    }
    // A worker that crashed is replaced; one that keeps crashing at start waits longer each time.
    const now = Date.now();
    recentDeaths.push(now);
    while (recentDeaths.length && recentDeaths[0] < now - 60_000) recentDeaths.shift();
    const wait = recentDeaths.length > 3 ? Math.min(30_000, 1000 * 2 ** (recentDeaths.length - 3)) : 0;
    log.warn(`worker ${w.process.pid} exited (${signal ?? `code ${code}`}); starting another${wait ? ` in ${wait / 1000} s` : ''}`);
    setTimeout(() => {
      if (!stopping) fork();
    }, wait).unref();
  });

  process.on('SIGINT', () => void shutdown('SIGINT'));
  process.on('SIGTERM', () => void shutdown('SIGTERM'));

  let port = config.PORT;
  const listening = new Promise<void>((resolve) => {
    let n = 0;
    cluster.on('listening', (_w, address) => {
      port = address.port;
      if (++n === count) resolve();
    });
  });
  for (let i = 0; i < count; i++) fork();
  await listening;
  started = true;

  if (config.JOBS_IN_APP === 'true') reminderJob = startReminderJob({ db, mailer, log, config });

  console.log(`\nKeepwell is running at http://${config.HOST}:${port}/  (${count} worker processes, ready in ${Math.round(performance.now() - t0)} ms)`);
  if (config.LOAD_DEMO === 'auto') {
    console.log(`Demo sign-ins (password for all: ${DEMO_PASSWORD}):`);
    for (const lab of DEMO_LABS) for (const p of lab.people) console.log(`  ${p.email.padEnd(30)} ${p.role.padEnd(11)} ${lab.name}`);
  }
  if (!config.smtp) {
    console.log('E-mail: no SMTP settings, so messages go to a local fake SMTP service and are not delivered.');
    if (outboxAvailable(config)) console.log(`  Read them on the Outbox page (owners): http://${config.HOST}:${port}/lab/outbox`);
    else log.warn('NODE_ENV=production without SMTP settings: e-mail (invitations, password resets, reminders) is not delivered. Set SMTP_HOST.');
  } else {
    console.log(`E-mail: through ${config.smtp.host}:${config.smtp.port} as ${config.MAIL_FROM}`);
  }
  console.log('Press Ctrl-C to stop.\n');

  async function shutdown(signal: string, exitCode = 0) {
    if (stopping) return;
    stopping = true;
    log.info(`${signal}: stopping the workers, then the database`);
    const workers = Object.values(cluster.workers ?? {}).filter((w): w is Worker => w != null && !w.isDead());
    await Promise.all(
      workers.map(
        (w) =>
          new Promise<void>((resolve) => {
            const force = setTimeout(() => w.process.kill('SIGKILL'), 20_000);
            w.once('exit', () => {
              clearTimeout(force);
              resolve();
            });
            // Each finishes its requests in flight (server/main.ts); after Ctrl-C they have the signal already.
            w.process.kill('SIGTERM');
          }),
      ),
    );
    await reminderJob?.stop();
    await mailer.close();
    await database.close();
    log.info('stopped');
    process.exit(exitCode);
  }
}
