/**
 * Chamber-log benchmark: a year of minute readings (525 600 rows, about 20 MB) uploaded through
 * the API over HTTP, stored and summarised in one request; then the period routes on that log.
 *
 * Two ways to run it:
 * - as part of `npm run bench` (tests/bench/run.ts imports `scenarios`): the one-off upload is
 *   timed in setup, then a month's period summary is load-tested;
 * - alone: `node --import tsx tests/bench/chamber-upload.ts` launches a throwaway MariaDB with full
 *   durability in a temp dir (BENCH_TMPDIR overrides), the demo labs and the app in this process,
 *   prints the figures, and cleans up. CHAMBER_ROWS overrides the row count.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import os from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { fileURLToPath } from 'node:url';
import type { Scenario, BenchContext } from './scenario';

export const YEAR_OF_MINUTES = 525_600;
const MINUTE = 60_000;
const FORMULATOR = 'formulator@larkspur.example';

/**
 * A logger-style CSV: one reading a minute from 2025-01-01 00:00 UTC, 45 °C with a daily wobble,
 * RH around 60 %, a one-hour excursion every 30 days. Deterministic (no Math.random).
 */
export function yearCsv(rows = YEAR_OF_MINUTES): Buffer {
  const t0 = Date.UTC(2025, 0, 1);
  const parts: string[] = ['Timestamp,Temperature (°C),RH (%)\n'];
  let chunk = '';
  for (let i = 0; i < rows; i++) {
    const iso = new Date(t0 + i * MINUTE).toISOString().slice(0, 19);
    const excursion = i % 43_200 >= 20_000 && i % 43_200 < 20_060;
    const temp = excursion ? 48.1 : 45 + 0.4 * Math.sin((2 * Math.PI * i) / 1440) + 0.05 * Math.sin(i * 12.9898);
    const rh = 60 + 2 * Math.sin((2 * Math.PI * i) / 720);
    chunk += `${iso}Z,${temp.toFixed(2)},${rh.toFixed(1)}\n`;
    if (chunk.length > 1 << 20) {
      parts.push(chunk);
      chunk = '';
    }
  }
  parts.push(chunk);
  return Buffer.from(parts.join(''), 'utf8');
}

interface Measured {
  logId: number;
  lines: string[];
  /** Seconds from sending the file to the stored, summarised log. */
  uploadSeconds: number;
}

async function api(baseUrl: string, cookie: string, path: string, init: RequestInit = {}): Promise<Response> {
  const headers = new Headers(init.headers);
  headers.set('cookie', cookie);
  if (init.method && init.method !== 'GET') headers.set('x-keepwell-request', '1');
  return fetch(`${baseUrl}/api${path}`, { ...init, headers });
}

async function timed<T>(fn: () => Promise<T>): Promise<[T, number]> {
  const t = performance.now();
  const v = await fn();
  return [v, (performance.now() - t) / 1000];
}

/** CPU seconds (user + system) a process has used, from /proc (Linux), or null. */
function cpuSecondsOf(pid: number | undefined): number | null {
  if (!pid) return null;
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return (Number(fields[11]) + Number(fields[12])) / 100; // utime + stime in clock ticks (USER_HZ = 100)
  } catch {
    return null;
  }
}

/** Creates an oven condition, uploads the year, then times the period routes on it. */
export async function measureChamberUpload(
  baseUrl: string,
  cookie: string,
  rows = YEAR_OF_MINUTES,
  opts: { dbPid?: number; appInProcess?: boolean } = {},
): Promise<Measured> {
  const lines: string[] = [];
  const [csv, genSeconds] = await timed(async () => yearCsv(rows));
  lines.push(`generated ${rows.toLocaleString('en-US')} rows, ${(csv.length / 1e6).toFixed(1)} MB, in ${genSeconds.toFixed(1)} s`);

  const created = await api(baseUrl, cookie, '/storage-conditions', {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ kind: 'constant', name: `Bench oven ${Date.now()}`, location: 'bench', setpointC: 45 }),
  });
  if (created.status !== 201) throw new Error(`creating the condition answered ${created.status}: ${await created.text()}`);
  const conditionId = ((await created.json()) as { condition: { id: number } }).condition.id;

  const form = new FormData();
  form.append('file', new Blob([new Uint8Array(csv)], { type: 'text/csv' }), 'bench-year.csv');
  const cpu0 = process.cpuUsage();
  const db0 = cpuSecondsOf(opts.dbPid);
  const [res, upSeconds] = await timed(async () => {
    const r = await api(baseUrl, cookie, `/storage-conditions/${conditionId}/logs`, { method: 'POST', body: form });
    return { status: r.status, body: (await r.json()) as { log?: { id: number; summary: { count: number; mktC: number; hoursOutOfTolerance: number; excursionCount: number } } } };
  });
  if (res.status !== 201 || !res.body.log) throw new Error(`upload answered ${res.status}: ${JSON.stringify(res.body)}`);
  const s = res.body.log.summary;
  lines.push(
    `upload + parse + store + summarise: ${upSeconds.toFixed(2)} s, ${Math.round(rows / upSeconds).toLocaleString('en-US')} rows/s ` +
      `(count ${s.count.toLocaleString('en-US')}, MKT ${s.mktC.toFixed(2)} °C, ${s.hoursOutOfTolerance.toFixed(2)} h out, ${s.excursionCount} excursions)`,
  );
  const nodeCpu = process.cpuUsage(cpu0);
  const db1 = cpuSecondsOf(opts.dbPid);
  if (opts.appInProcess) {
    lines.push(
      `  CPU during the upload: Node (client + app) ${((nodeCpu.user + nodeCpu.system) / 1e6).toFixed(1)} s` +
        (db0 != null && db1 != null ? `, MariaDB ${(db1 - db0).toFixed(1)} s` : '') +
        `; load average ${os.loadavg()[0].toFixed(1)} on ${os.cpus().length} cores`,
    );
  }
  const logId = res.body.log.id;
  const first = new Date(Date.UTC(2025, 0, 1)).toISOString();
  const last = new Date(Date.UTC(2025, 0, 1) + (rows - 1) * MINUTE).toISOString();
  const checks: [string, string][] = [
    ['summary of the whole log recomputed from stored readings', `/chamber-logs/${logId}/summary?from=${first}&to=${last}`],
    ['summary of one month', `/chamber-logs/${logId}/summary?from=2025-03-01T00:00:00Z&to=2025-03-31T23:59:59Z`],
    ['chart series of the whole log', `/chamber-logs/${logId}/series`],
    ['CSV of every reading', `/chamber-logs/${logId}/readings.csv`],
  ];
  for (const [what, path] of checks) {
    const [bytes, seconds] = await timed(async () => {
      const r = await api(baseUrl, cookie, path);
      if (r.status !== 200) throw new Error(`${path} answered ${r.status}`);
      return (await r.arrayBuffer()).byteLength;
    });
    lines.push(`${what}: ${seconds.toFixed(2)} s (${(bytes / 1024).toFixed(0)} kB)`);
  }
  return { logId, lines, uploadSeconds: upSeconds };
}

/** For `npm run bench`: the upload is timed once in setup; a month's summary is the load. */
export function scenarios(): Scenario[] {
  let cookie = '';
  let logId = 0;
  return [
    {
      name: 'chamber',
      about: 'a year of minute readings uploaded once (timed), then one month summarised from the stored readings',
      async setup(ctx: BenchContext) {
        cookie = await ctx.signIn(FORMULATOR);
        const rows = Number(process.env.CHAMBER_ROWS ?? YEAR_OF_MINUTES);
        const m = await measureChamberUpload(ctx.baseUrl, cookie, rows);
        logId = m.logId;
        for (const l of m.lines) ctx.log(`  ${l}`);
        ctx.goalResult({
          scenario: 'chamber',
          what: `upload of ${rows.toLocaleString('en-US')} rows, once`,
          measured: `${m.uploadSeconds.toFixed(1)} s`,
          goal: 'keep: < 10 s',
          met: m.uploadSeconds < 10,
        });
      },
      request() {
        return {
          connections: 10,
          goal: { p50Max: 50 },
          method: 'GET',
          path: `/api/chamber-logs/${logId}/summary?from=2025-03-01T00:00:00Z&to=2025-03-31T23:59:59Z`,
          headers: { cookie },
          note: 'each request streams 44 640 stored readings through the summary accumulator',
        };
      },
    },
  ];
}

// ---- standalone ------------------------------------------------------------------------------
async function standalone() {
  const { launchMariaDb } = await import('../../server/db/mariadb');
  const { runMigrations } = await import('../../server/db/migrate');
  const { grantAppAccount } = await import('../../server/db/grants');
  const { createDb, createPool } = await import('../../server/db/client');
  const { seedDemo } = await import('../../server/demo/seed');
  const { DEMO_PASSWORD } = await import('../../server/demo/people');
  const { createApp } = await import('../../server/app');
  const { loadConfig } = await import('../../server/config');
  const { createLogger } = await import('../../server/log');

  const base = mkdtempSync(join(process.env.BENCH_TMPDIR ?? os.tmpdir(), 'keepwell-chamber-bench-'));
  const launched = await launchMariaDb({ baseDir: base, database: 'keepwell_bench', fast: false });
  await runMigrations(launched.admin);
  await grantAppAccount(launched.admin, launched.app.user);
  const pool = createPool(launched.app, 10);
  const { app, close } = createApp({
    db: createDb(pool),
    pool,
    config: loadConfig({ NODE_ENV: 'production' }),
    log: createLogger(true),
    sessionSecret: 'keepwell-bench-session-secret-not-for-production',
    serveClient: false,
  });
  const server = app.listen(0, '127.0.0.1');
  try {
    await seedDemo(createDb(pool));
    if (!server.listening) await new Promise((r) => server.once('listening', r));
    const baseUrl = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
    const signIn = await fetch(`${baseUrl}/api/auth/sign-in`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-keepwell-request': '1' },
      body: JSON.stringify({ email: FORMULATOR, password: DEMO_PASSWORD }),
    });
    const cookie = signIn.headers.getSetCookie().find((c) => c.startsWith('kw.sid='))?.split(';')[0];
    if (!cookie) throw new Error(`sign-in answered ${signIn.status}`);
    const rows = Number(process.env.CHAMBER_ROWS ?? YEAR_OF_MINUTES);
    console.log(`Chamber-log benchmark (MariaDB with full durability in ${base}; app in this process; ${os.cpus().length} cores, ${os.cpus()[0]?.model ?? ''})`);
    const dbPid = Number(readFileSync(join(base, 'mariadb.pid'), 'utf8').trim()) || undefined;
    const m = await measureChamberUpload(baseUrl, cookie, rows, { dbPid, appInProcess: true });
    for (const l of m.lines) console.log(`  ${l}`);
  } finally {
    server.closeAllConnections();
    await new Promise((r) => server.close(r));
    await close();
    await pool.end();
    await launched.stop();
    rmSync(base, { recursive: true, force: true });
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  standalone().catch((err) => {
    console.error(err);
    process.exit(1);
  });
}
