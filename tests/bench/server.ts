/**
 * The app under benchmark, in its own process so the load generator does not
 * share its event loop. Started by run.ts as `node --import tsx tests/bench/server.ts`
 * with the database target in KW_BENCH_DB (JSON); prints one JSON line
 * {"port":N,"pid":N} once listening. Stops on SIGTERM/SIGINT or when its
 * parent goes away (stdin closes).
 *
 * Production settings: NODE_ENV=production, a quiet logger, the pool size
 * `npm start` uses (createPool's default), session store in MariaDB.
 * One difference, for the benchmark only: the per-IP sign-in limiter is
 * lifted (signInIpLimit 1e9) so thousands of sign-ins from 127.0.0.1 are not
 * refused (it only counts failures, but the bench should not depend on that).
 */
import type { Server } from 'node:http';
import { createApp } from '../../server/app';
import { loadConfig } from '../../server/config';
import { createDb, createPool } from '../../server/db/client';
import type { ConnectionTarget } from '../../server/db/mariadb';
import { createLogger } from '../../server/log';

const target = JSON.parse(process.env.KW_BENCH_DB ?? 'null') as ConnectionTarget | null;
if (!target) {
  console.error('KW_BENCH_DB (JSON connection target) is required; run the benchmark with `npm run bench`.');
  process.exit(2);
}
const poolSize = process.env.KW_BENCH_POOL ? Number(process.env.KW_BENCH_POOL) : undefined;

const pool = createPool(target, poolSize);
const db = createDb(pool);
const { app, close } = createApp({
  db,
  pool,
  config: loadConfig({ NODE_ENV: 'production' }),
  log: createLogger(true),
  sessionSecret: 'keepwell-bench-session-secret-not-for-production',
  signInIpLimit: 1e9,
  serveClient: false,
});

const server: Server = app.listen(0, '127.0.0.1');
await new Promise<void>((resolve, reject) => {
  server.once('listening', resolve);
  server.once('error', reject);
});
const addr = server.address();
process.stdout.write(`${JSON.stringify({ port: typeof addr === 'object' && addr ? addr.port : 0, pid: process.pid })}\n`);

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
process.stdin.on('end', () => void stop());
process.stdin.resume();
