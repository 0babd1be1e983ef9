/**
 * The app under benchmark, in its own processes so the load generator does not share their event
 * loops. Started by run.ts as `node --import tsx tests/bench/server.ts` with the database target in
 * KW_BENCH_DB (JSON); serves from KW_BENCH_WORKERS worker processes (default one per core, as
 * `npm start`) through Node's cluster module, each a copy of the app with its own pool. Prints one
 * JSON line {"port":N,"pid":N,"workers":[pid,...]} once every worker listens. Stops on SIGTERM/SIGINT
 * or when its parent goes away (stdin closes). KW_BENCH_WORKERS=1 serves from this one process.
 *
 * Production settings: NODE_ENV=production, a quiet logger, the pool size `npm start` uses
 * (createPool's default, per worker), sessions in MariaDB.
 * One difference, for the benchmark only: the per-IP sign-in limiter is lifted (signInIpLimit 1e9)
 * so thousands of sign-ins from 127.0.0.1 are not refused (it only counts failures, but the bench
 * should not depend on that).
 */
import cluster, { type Worker } from 'node:cluster';
import type { Server } from 'node:http';
import { availableParallelism } from 'node:os';
import { createApp } from '../../server/app';
import { loadConfig } from '../../server/config';
import { BULK_POOL_SIZE, useBulkPool } from '../../server/db/bulk';
import { createDb, createPool } from '../../server/db/client';
import type { ConnectionTarget } from '../../server/db/mariadb';
import { createLogger } from '../../server/log';

const target = JSON.parse(process.env.KW_BENCH_DB ?? 'null') as ConnectionTarget | null;
const bulkTarget = JSON.parse(process.env.KW_BENCH_BULK_DB ?? 'null') as ConnectionTarget | null;
if (!target) {
  console.error('KW_BENCH_DB (JSON connection target) is required; run the benchmark with `npm run bench`.');
  process.exit(2);
}
const poolSize = process.env.KW_BENCH_POOL ? Number(process.env.KW_BENCH_POOL) : undefined;
const workers = Number(process.env.KW_BENCH_WORKERS ?? availableParallelism());

if (cluster.isPrimary && workers > 1) {
  await primary();
} else {
  await serve();
}

async function primary() {
  cluster.setupPrimary({ execArgv: process.execArgv, silent: false });
  const forked: Worker[] = [];
  let port = 0;
  let stopping = false;
  await new Promise<void>((resolve, reject) => {
    let n = 0;
    cluster.on('listening', (_w, address) => {
      port = address.port;
      if (++n === workers) resolve();
    });
    cluster.on('exit', (w, code) => {
      if (!stopping) reject(new Error(`bench worker ${w.process.pid} exited (code ${code})`));
    });
    for (let i = 0; i < workers; i++) forked.push(cluster.fork());
  });
  process.stdout.write(`${JSON.stringify({ port, pid: process.pid, workers: forked.map((w) => w.process.pid) })}\n`);

  const stop = async () => {
    if (stopping) return;
    stopping = true;
    await Promise.all(
      forked
        .filter((w) => !w.isDead())
        .map((w) => new Promise<void>((resolve) => {
          w.once('exit', () => resolve());
          w.process.kill('SIGTERM');
        })),
    );
    process.exit(0);
  };
  process.on('SIGTERM', () => void stop());
  process.on('SIGINT', () => void stop());
  process.stdin.on('end', () => void stop());
  process.stdin.resume();
}

async function serve() {
  const pool = createPool(target!, poolSize);
  const db = createDb(pool);
  // As `npm start`: chamber-log imports over TCP beside the socket (server/db/bulk.ts).
  if (bulkTarget) useBulkPool(db, createPool(bulkTarget, BULK_POOL_SIZE));
  const { app, close } = createApp({
    db,
    pool,
    config: loadConfig({ NODE_ENV: 'production' }),
    log: createLogger(true),
    sessionSecret: 'keepwell-bench-session-secret-not-for-production',
    signInIpLimit: 1e9,
    serveClient: false,
  });

  // Workers share port 0 through the primary (the cluster module gives every worker the same port).
  const server: Server = app.listen(0, '127.0.0.1');
  await new Promise<void>((resolve, reject) => {
    server.once('listening', resolve);
    server.once('error', reject);
  });
  const addr = server.address();
  if (!cluster.isWorker) process.stdout.write(`${JSON.stringify({ port: typeof addr === 'object' && addr ? addr.port : 0, pid: process.pid, workers: [] })}\n`);

  /** Connections of the app's pool busy with a query (mysql2 keeps these lists). */
  function busyConnections(): number {
    const p = pool.pool as unknown as { _allConnections?: { length: number }; _freeConnections?: { length: number } };
    return (p._allConnections?.length ?? 0) - (p._freeConnections?.length ?? 0);
  }

  let stopping = false;
  async function stop() {
    if (stopping) return;
    stopping = true;
    // Stop taking requests, then let handlers still running (clients may have gone) finish their queries.
    const closed = new Promise<void>((resolve) => server.close(() => resolve()));
    server.closeIdleConnections();
    const deadline = Date.now() + 10_000;
    while (busyConnections() > 0 && Date.now() < deadline) await new Promise((r) => setTimeout(r, 50));
    server.closeAllConnections();
    await closed;
    await close();
    await pool.end();
    process.exit(0);
  }
  process.on('SIGTERM', () => void stop());
  process.on('SIGINT', () => void stop());
  if (cluster.isWorker) {
    process.on('disconnect', () => void stop());
  } else {
    process.stdin.on('end', () => void stop());
    process.stdin.resume();
  }
}
