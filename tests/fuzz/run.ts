/**
 * `npm run fuzz`: sends FUZZ_REQUESTS (default 20 000) generated bad requests to the real app on a
 * throwaway MariaDB (under /dev/shm, the tests' fast settings) loaded with the demo labs, and prints
 * the counts by status code and every failure (5xx, internals shown, rows written by a refused
 * request; see tests/fuzz/harness.ts). FUZZ_SEED picks the sequence (default: the time); a failure
 * prints the seed and request number, so `FUZZ_SEED=N npm run fuzz` repeats it. FUZZ_SHOW_TEMPLATES=1
 * lists the body templates each route was matched to. Exit code 1 on failure.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createApp } from '../../server/app';
import { loadConfig } from '../../server/config';
import { createDb, createPool } from '../../server/db/client';
import { grantAppAccount } from '../../server/db/grants';
import { launchMariaDb } from '../../server/db/mariadb';
import { runMigrations } from '../../server/db/migrate';
import { DEMO_PASSWORD } from '../../server/demo/people';
import { seedDemo } from '../../server/demo/seed';
import { describeFailure, Fuzzer, seedOtherLab } from './harness';

const COUNT = Number(process.env.FUZZ_REQUESTS ?? 20_000);
const SEED = Number(process.env.FUZZ_SEED ?? Date.now() % 2 ** 31);

const base = mkdtempSync(join(process.platform === 'linux' ? '/dev/shm' : tmpdir(), 'keepwell-fuzz-'));
const cleanups: (() => Promise<unknown>)[] = [];
let stopping = false;
async function cleanup() {
  if (stopping) return;
  stopping = true;
  for (const fn of cleanups.reverse()) await fn().catch((e) => console.error('clean-up:', e instanceof Error ? e.message : e));
  rmSync(base, { recursive: true, force: true });
}
for (const sig of ['SIGINT', 'SIGTERM'] as const) process.on(sig, () => void cleanup().then(() => process.exit(130)));

let exitCode = 0;
try {
  const t0 = performance.now();
  const server = await launchMariaDb({ baseDir: base, database: 'keepwell_fuzz', fast: true });
  cleanups.push(() => server.stop());
  await runMigrations(server.admin);
  await grantAppAccount(server.admin, server.app.user);
  const pool = createPool(server.app, 10);
  cleanups.push(() => pool.end());
  const db = createDb(pool);
  const uploadsDir = mkdtempSync(join(base, 'uploads-'));
  const labs = await seedDemo(db, { content: 'full', uploadsDir });
  await seedOtherLab(db, labs[1], 'UTC');
  const unhandled: string[] = [];
  const log = {
    info: () => {},
    warn: () => {},
    error: (msg: string, err?: unknown) => void unhandled.push(`${msg}\n${err instanceof Error ? err.stack : String(err ?? '')}`),
  };
  const { app, close } = createApp({
    db,
    pool,
    config: loadConfig({ NODE_ENV: 'test' }),
    log,
    sessionSecret: 'keepwell-fuzz-session-secret-not-for-production',
    signInIpLimit: 1e9,
    serveClient: false,
    uploadsDir,
  });
  cleanups.push(() => close());

  const fuzzer = new Fuzzer({
    app,
    admin: server.admin,
    labs,
    emails: { owner: 'owner@larkspur.example', formulator: 'formulator@larkspur.example', technician: 'tech@larkspur.example' },
    password: DEMO_PASSWORD,
  });
  cleanups.push(() => fuzzer.stop());
  await fuzzer.start();
  console.log(
    `Fuzzing ${fuzzer.routes.length} routes (${fuzzer.routeTemplates.size} with a body template) as owner, formulator, technician and signed out; seed ${SEED}; ready in ${((performance.now() - t0) / 1000).toFixed(1)} s`,
  );
  if (process.env.FUZZ_SHOW_TEMPLATES) for (const [k, ts] of fuzzer.routeTemplates) console.log(`  ${k}: ${ts.map((t) => t.name).join(', ')}`);
  const report = await fuzzer.run(COUNT, SEED, { onProgress: (n) => process.stdout.write(`  ${n} sent\r`) });

  console.log(`\n${report.sent} requests in ${report.seconds.toFixed(1)} s (${(report.sent / report.seconds).toFixed(0)}/s; ${report.answerSeconds.toFixed(1)} s waiting for answers, ${report.countSeconds.toFixed(1)} s counting rows)`);
  console.log('status  count');
  for (const [status, n] of [...report.byStatus].sort((a, b) => a[0] - b[0])) console.log(`${String(status).padEnd(6)}  ${n}`);
  if (report.failures.length) {
    exitCode = 1;
    console.log(`\n${report.failures.length} failures:`);
    for (const f of report.failures.slice(0, 50)) console.log(`\n${describeFailure(f, SEED)}`);
    if (unhandled.length) {
      console.log(`\nServer log of unhandled errors (first ${Math.min(unhandled.length, 10)} of ${unhandled.length}):`);
      for (const u of unhandled.slice(0, 10)) console.log(`\n${u.split('\n').slice(0, 12).join('\n')}`);
    }
  } else console.log('\nNo failures.');
} catch (err) {
  exitCode = 1;
  console.error(err);
} finally {
  await cleanup();
}
process.exit(exitCode);
