/**
 * `npm run bench`: throughput and latency of the real app on a real MariaDB.
 *
 * 1. Launches a throwaway MariaDB in a temp dir with FULL DURABILITY, like the
 *    start command (innodb_flush_log_at_trx_commit=1, doublewrite on, every
 *    commit fsynced): not the tests' fast settings. The temp dir is under
 *    os.tmpdir() (disk here), not /dev/shm, because fsync on tmpfs is free and
 *    would flatter every write. BENCH_TMPDIR overrides it.
 * 2. Migrations, the app account's grants, the demo labs, then a bigger
 *    invented dataset (tests/bench/dataset.ts).
 * 3. Starts the app in a child process (tests/bench/server.ts; its cluster workers,
 *    one per core) so autocannon does not share its event loop, and drives it over loopback: BENCH_SECONDS
 *    (default 10) per run after a BENCH_WARMUP (default 2) s warm-up,
 *    50 connections (10 for sign-in), no pipelining.
 * 4. Beside each route, the same SQL straight through mysql2 with the same
 *    concurrency ("raw"), and the ratio app req/s ÷ raw ops/s.
 * 5. Prints a table, the machine and the date; cleans up everything, also on
 *    error or Ctrl-C (a second Ctrl-C cleans up at once).
 *
 * Environment: BENCH_SECONDS, BENCH_WARMUP, BENCH_ONLY=name,name (scenarios to
 * run), BENCH_TMPDIR, BENCH_TRACE=1 (print the SQL one request of each
 * scenario sends, from MariaDB's general log), BENCH_JSON=path (write results),
 * KW_BENCH_POOL (the app's pool size per process; default createPool's 20, as `npm start`), KW_BENCH_WORKERS
 * (app worker processes; default one per core, as `npm start`), BENCH_PROFILE=dir
 * (the app server writes a V8 CPU profile there when it stops; open it in Chromium's DevTools).
 * A scenario that fails is reported and skipped; the exit code is then 1.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statfsSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { createInterface } from 'node:readline';
import { fileURLToPath, pathToFileURL } from 'node:url';
import mysql from 'mysql2/promise';
import { createDb, createPool } from '../../server/db/client';
import { grantAppAccount } from '../../server/db/grants';
import { launchMariaDb } from '../../server/db/mariadb';
import { runMigrations } from '../../server/db/migrate';
import { seedDemo } from '../../server/demo/seed';
import { generateDataset } from './dataset';
import { benchInitialJs, BENCH_INITIAL_JS_GOAL_KB } from './client-size';
import { abort, CpuWatch, DEFAULT_CONNECTIONS, runHttp, runRaw, waitForQuiet, type Measured } from './measure';
import type { BenchContext, Goal, GoalResult, HttpLoad, Scenario, ScenarioExport } from './scenario';
import { coreScenarios } from './scenarios';

/** More bench modules, run after the core scenarios when the file exists (see scenario.ts for the export). */
const EXTRA_MODULES = ['./studies.ts', './chamber-upload.ts'];

const SECONDS = Number(process.env.BENCH_SECONDS ?? 10);
const WARMUP = Number(process.env.BENCH_WARMUP ?? 2);
const ONLY = process.env.BENCH_ONLY?.split(',').map((s) => s.trim()).filter(Boolean);
const TRACE = process.env.BENCH_TRACE === '1';
/** Connections in the raw pool: as many as the largest concurrency used. */
const RAW_POOL_SIZE = 50;
const REPO = fileURLToPath(new URL('../..', import.meta.url));
const SERVER_ENTRY = fileURLToPath(new URL('./server.ts', import.meta.url));

const wall0 = performance.now();
const say = (line: string) => console.log(line);
const secs = (t0: number) => ((performance.now() - t0) / 1000).toFixed(1);

// ---- clean-up, on every way out ----------------------------------------------------------
const cleanups: { name: string; fn: () => Promise<unknown> | unknown }[] = [];
let cleaning: Promise<void> | null = null;
function cleanup(): Promise<void> {
  cleaning ??= (async () => {
    for (const { name, fn } of cleanups.reverse()) {
      try {
        await fn();
      } catch (err) {
        console.error(`clean-up "${name}" failed:`, err instanceof Error ? err.message : err);
      }
    }
  })();
  return cleaning;
}
function onSignal(signal: NodeJS.Signals) {
  if (abort.requested) {
    say(`\n${signal} again: cleaning up now.`);
    void cleanup().then(() => process.exit(130));
    return;
  }
  abort.requested = true;
  abort.current?.stop();
  say(`\n${signal}: stopping after the current step, then cleaning up (press again to clean up at once).`);
}
process.on('SIGINT', onSignal);
process.on('SIGTERM', onSignal);
function checkAbort() {
  if (abort.requested) throw new Error('Interrupted');
}

// ---- the app under test, in a child process -----------------------------------------------
async function startServer(env: Record<string, string>): Promise<{ port: number; child: ChildProcess; workers: number[] }> {
  const profile = process.env.BENCH_PROFILE ? ['--cpu-prof', `--cpu-prof-dir=${process.env.BENCH_PROFILE}`] : [];
  const child = spawn(process.execPath, [...profile, '--import', 'tsx', SERVER_ENTRY], {
    cwd: REPO,
    env: { ...process.env, ...env },
    stdio: ['pipe', 'pipe', 'inherit'],
  });
  const lines = createInterface({ input: child.stdout! });
  const { port, workers } = await new Promise<{ port: number; workers: number[] }>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error('The bench server did not start within 60 s')), 60_000);
    child.once('exit', (code) => reject(new Error(`The bench server exited during start-up (code ${code})`)));
    lines.once('line', (line) => {
      clearTimeout(timer);
      try {
        const first = JSON.parse(line) as { port: number; workers?: number[] };
        resolve({ port: Number(first.port), workers: first.workers ?? [] });
      } catch {
        reject(new Error(`Unexpected first line from the bench server: ${line}`));
      }
    });
  });
  // Anything else it prints goes to our stdout.
  lines.on('line', (l) => say(`[server] ${l}`));
  return { port, child, workers };
}

async function stopChild(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return;
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  child.kill('SIGTERM');
  const timer = setTimeout(() => child.kill('SIGKILL'), 10_000);
  await exited;
  clearTimeout(timer);
}

// ---- scenarios from extra modules ---------------------------------------------------------
async function extraScenarios(ctx: BenchContext, failures: Failure[]): Promise<Scenario[]> {
  const out: Scenario[] = [];
  for (const rel of EXTRA_MODULES) {
    const file = fileURLToPath(new URL(rel, import.meta.url));
    if (!existsSync(file)) continue;
    try {
      const mod = (await import(pathToFileURL(file).href)) as { scenarios?: ScenarioExport; default?: ScenarioExport };
      const exported = mod.scenarios ?? mod.default;
      if (!exported) throw new Error('exports neither "scenarios" nor a default');
      const value = typeof exported === 'function' ? await exported(ctx) : exported;
      out.push(...(Array.isArray(value) ? value : [value]));
    } catch (err) {
      failures.push({ scenario: rel, message: err instanceof Error ? err.message : String(err) });
      say(`✗ could not load ${rel}: ${failures.at(-1)!.message}`);
    }
  }
  return out;
}

interface Failure {
  scenario: string;
  message: string;
}

// ---- BENCH_TRACE: the SQL one request sends -----------------------------------------------
async function traceOneRequest(ctx: BenchContext, load: HttpLoad, appUser: string): Promise<string[]> {
  const conn = await mysql.createConnection({ ...ctx.admin });
  try {
    await conn.query("SET GLOBAL log_output = 'TABLE'");
    await conn.query('TRUNCATE mysql.general_log');
    await conn.query('SET GLOBAL general_log = 1');
    let spec = load.requests?.[0] ?? { method: load.method, path: load.path, headers: load.headers, body: load.body };
    if (spec.setupRequest) spec = spec.setupRequest({ ...spec }, {}) ?? spec;
    const res = await fetch(ctx.baseUrl + (spec.path ?? '/'), {
      method: spec.method ?? 'GET',
      headers: { ...load.headers, ...spec.headers },
      body: spec.body == null ? undefined : typeof spec.body === 'string' ? spec.body : new Uint8Array(spec.body),
    });
    await res.arrayBuffer();
    await new Promise((r) => setTimeout(r, 200)); // the session touch runs after the response
    await conn.query('SET GLOBAL general_log = 0');
    const [rows] = await conn.query<mysql.RowDataPacket[]>(
      "SELECT argument FROM mysql.general_log WHERE command_type IN ('Query', 'Execute') AND user_host LIKE ? ORDER BY event_time",
      [`${appUser}%`],
    );
    return [`HTTP ${res.status}`, ...rows.map((r) => String(r.argument))];
  } finally {
    await conn.query('SET GLOBAL general_log = 0').catch(() => {});
    await conn.end();
  }
}

// ---- report -------------------------------------------------------------------------------
interface Row {
  scenario: string;
  what: string;
  kind: 'app' | 'raw';
  concurrency: number;
  m: Measured;
  ratio?: number;
}

const fmt = (n: number | undefined, digits = 1) => (n == null || Number.isNaN(n) ? '-' : n.toLocaleString('en-US', { minimumFractionDigits: digits, maximumFractionDigits: digits }));
const cpuText = (m: Measured) => (m.cpu ? [m.cpu.server, m.cpu.mariadb, m.cpu.loadgen, m.cpu.others].map((v) => (v == null ? '-' : String(Math.round(v)))).join('/') : '-');

const clip = (text: string, n: number) => (text.length > n ? `${text.slice(0, n - 1)}…` : text);

function rowLine(r: Row): string {
  const problems = r.kind === 'app' ? `${r.m.non2xx}/${r.m.errors}` : `-/${r.m.errors}`;
  return [
    r.scenario.padEnd(10),
    clip(`${r.kind === 'app' ? 'app ' : 'raw '} ${r.what}`, 50).padEnd(50),
    String(r.concurrency).padStart(4),
    fmt(r.m.rate).padStart(10),
    fmt(r.m.p50, 2).padStart(8),
    fmt(r.m.p99, 2).padStart(8),
    problems.padStart(9),
    (r.ratio == null ? '' : r.ratio.toFixed(2)).padStart(8),
    cpuText(r.m).padStart(16),
  ].join('  ');
}
const HEADER = [
  'scenario'.padEnd(10),
  'measured'.padEnd(50),
  'conc'.padStart(4),
  'per s'.padStart(10),
  'p50 ms'.padStart(8),
  'p99 ms'.padStart(8),
  'non2xx/err'.padStart(9),
  'app÷raw'.padStart(8),
  'CPU% srv/db/gen/oth'.padStart(16),
].join('  ');

// ---- main ---------------------------------------------------------------------------------
async function main() {
  const started = new Date();
  const loadStart = os.loadavg()[0];
  if (loadStart > os.cpus().length * 0.25) say(`! Load average ${loadStart.toFixed(2)} on ${os.cpus().length} cores before starting: other work is running and will lower the figures.`);
  const base = mkdtempSync(join(process.env.BENCH_TMPDIR ?? os.tmpdir(), 'keepwell-bench-'));
  cleanups.push({ name: 'remove temp dir', fn: () => rmSync(base, { recursive: true, force: true }) });
  const onTmpfs = statfsSync(base).type === 0x01021994;

  let t = performance.now();
  const launched = await launchMariaDb({ baseDir: base, database: 'keepwell_bench', fast: false });
  cleanups.push({ name: 'stop MariaDB', fn: () => launched.stop() });
  await runMigrations(launched.admin);
  await grantAppAccount(launched.admin, launched.app.user);
  say(`MariaDB up in ${base} (full durability${onTmpfs ? ', but on tmpfs: fsync is free there' : ', on disk'}), migrated: ${secs(t)} s`);
  checkAbort();

  t = performance.now();
  // The app's account over the server's socket, as `npm start` connects (cheaper per query than TCP).
  const appTarget = { ...launched.app, host: undefined, port: undefined, socketPath: launched.admin.socketPath };
  const pool = createPool(appTarget, RAW_POOL_SIZE);
  cleanups.push({ name: 'end raw pool', fn: () => pool.end() });
  const db = createDb(pool);
  const demo = await seedDemo(db);
  const data = await generateDataset(pool, demo);
  const [[counts]] = await pool.query<mysql.RowDataPacket[]>(
    'SELECT (SELECT COUNT(*) FROM labs) AS labs, (SELECT COUNT(*) FROM users) AS users, (SELECT COUNT(*) FROM audit_log) AS audit',
  );
  say(`Dataset: ${counts.labs} labs, ${counts.users} members, ${Number(counts.audit).toLocaleString('en-US')} audit rows: ${secs(t)} s`);
  checkAbort();

  t = performance.now();
  const { port, child, workers } = await startServer({ KW_BENCH_DB: JSON.stringify(appTarget), KW_BENCH_BULK_DB: JSON.stringify(launched.app) });
  cleanups.push({ name: 'stop bench server', fn: () => stopChild(child) });
  const baseUrl = `http://127.0.0.1:${port}`;
  const serverPids = [child.pid!, ...workers];
  say(`App listening on ${baseUrl} (child pid ${child.pid}${workers.length ? `, workers ${workers.join(', ')}` : ''}): ${secs(t)} s`);

  const goals: GoalResult[] = [];
  const ctx: BenchContext = {
    baseUrl,
    seconds: SECONDS,
    app: launched.app,
    admin: launched.admin,
    pool,
    db,
    data,
    log: say,
    goalResult: (r) => goals.push(r),
    async signIn(email, password = data.password) {
      const res = await fetch(`${baseUrl}/api/auth/sign-in`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', 'x-keepwell-request': '1' },
        body: JSON.stringify({ email, password }),
      });
      if (res.status !== 200) throw new Error(`Sign-in as ${email} answered ${res.status}: ${await res.text()}`);
      const cookie = res.headers.getSetCookie().find((c) => c.startsWith('kw.sid='));
      if (!cookie) throw new Error(`Sign-in as ${email} set no session cookie`);
      return cookie.split(';')[0];
    },
  };

  const failures: Failure[] = [];
  let scenarios = [...coreScenarios(), ...(await extraScenarios(ctx, failures))];
  if (ONLY) scenarios = scenarios.filter((s) => ONLY.includes(s.name));
  if (scenarios.length === 0) throw new Error(`No scenario matches BENCH_ONLY=${process.env.BENCH_ONLY}`);

  const dbPid = Number(readFileSync(join(base, 'mariadb.pid'), 'utf8').trim()) || undefined;
  const watch = new CpuWatch({ server: serverPids, mariadb: dbPid });
  const adminConn = await mysql.createConnection({ ...launched.admin });
  cleanups.push({ name: 'close admin connection', fn: () => adminConn.end() });
  /** Before each run: let the server finish what the previous run left in flight, so runs do not overlap. */
  const settle = async () => {
    const waited = await waitForQuiet({
      serverPids,
      activeQueries: async () => {
        const [[r]] = await adminConn.query<mysql.RowDataPacket[]>(
          "SELECT COUNT(*) AS n FROM information_schema.processlist WHERE user = ? AND command <> 'Sleep'",
          [launched.app.user],
        );
        return Number(r.n);
      },
    });
    if (waited > 1.5) say(`  (waited ${waited.toFixed(1)} s for requests left in flight by the previous run to finish)`);
  };
  const [[server]] = await pool.query<mysql.RowDataPacket[]>(
    'SELECT VERSION() AS version, @@innodb_flush_log_at_trx_commit AS flush, @@innodb_doublewrite AS doublewrite, @@innodb_buffer_pool_size AS bp',
  );

  const runs = scenarios.reduce((n, s) => n + 1 + (s.raw?.(ctx).length ?? 0), 0);
  say(`\n${scenarios.length} scenarios, ${runs} measured runs of ${SECONDS} s (+ ${WARMUP} s warm-up per HTTP run): about ${Math.round(runs * SECONDS + scenarios.length * WARMUP)} s plus each scenario's setup (a scenario may ask for longer runs).`);

  const rows: Row[] = [];
  const runScenario = async (s: Scenario) => {
    say(`\n▶ ${s.name}${s.about ? `: ${s.about}` : ''}`);
    await s.setup?.(ctx);
    const load = s.request(ctx);
    const conc0 = load.connections ?? DEFAULT_CONNECTIONS;
    if (TRACE) {
      const lines = await traceOneRequest(ctx, load, launched.app.user);
      say(`  SQL of one request (${lines[0]}):`);
      for (const l of lines.slice(1)) say(`    ${l.replace(/\s+/g, ' ').slice(0, 220)}`);
    }
    if (load.note) say(`  ${load.note}`);
    for (const conc of [conc0, ...(load.alsoAt ?? [])]) {
      const atLoad: HttpLoad = { ...load, connections: conc };
      await settle();
      if (WARMUP > 0) await runHttp(baseUrl, atLoad, WARMUP, watch);
      checkAbort();
      await settle();
      const seconds = load.seconds ?? SECONDS;
      const app = await runHttp(baseUrl, atLoad, seconds, watch);
      const appRow: Row = { scenario: s.name, what: describe(load), kind: 'app', concurrency: conc, m: app };
      rows.push(appRow);
      say(rowLine(appRow));
      const codes = Object.entries(app.statusCodes ?? {}).map(([c, n]) => `${c}×${n}`).join(', ');
      if (app.non2xx > 0 || app.errors > 0) say(`  ! non-2xx ${app.non2xx}, connection errors ${app.errors} (status codes: ${codes})`);
      if (app.count === 0) say(`  ! no response within the ${seconds} s run: one request takes longer than that here (set HttpLoad.seconds or BENCH_SECONDS)`);
      const rawRows: Row[] = [];
      for (const raw of s.raw?.(ctx) ?? []) {
        checkAbort();
        // A raw load pinned to its own concurrency (bcrypt's one thread, say) runs once, at the first count.
        if (raw.concurrency != null && conc !== conc0) continue;
        const c = raw.concurrency ?? conc;
        await settle();
        const m = await runRaw(raw, c, seconds, watch);
        const row: Row = { scenario: '', what: raw.name, kind: 'raw', concurrency: c, m, ratio: app.rate / m.rate };
        rows.push(row);
        rawRows.push(row);
        say(rowLine(row));
        if (m.errors > 0) say(`  ! ${m.errors} raw operations failed; first: ${m.firstError}`);
        if (raw.note) say(`  ${raw.note}`);
      }
      if (load.goal) goals.push(...checkGoal(s.name, load.goal, appRow, rawRows));
    }
  };
  for (const s of scenarios) {
    checkAbort();
    try {
      await runScenario(s);
    } catch (err) {
      // One broken scenario (a route still being written, say) does not cost the others' figures.
      if (abort.requested) throw err;
      const message = err instanceof Error ? err.message : String(err);
      failures.push({ scenario: s.name, message });
      say(`  ✗ ${s.name} failed: ${message}`);
    }
  }

  // The Bench's initial JavaScript: a full run builds the client into dist/ (as `npm start` does) and
  // measures it; alone, after a build: tests/bench/client-size.ts.
  if (!ONLY) {
    try {
      say('Building the client (vite build) to measure the Bench\'s initial JavaScript…');
      const built = spawnSync(process.execPath, [fileURLToPath(new URL('../../node_modules/vite/bin/vite.js', import.meta.url)), 'build', '--logLevel', 'warn'], {
        cwd: fileURLToPath(new URL('../..', import.meta.url)),
        stdio: 'inherit',
      });
      if (built.status !== 0) throw new Error(`vite build exited with ${built.status}`);
      const js = benchInitialJs();
      const kb = js.gzip / 1000;
      goals.push({
        scenario: 'client',
        what: `Bench's initial JS, dist/ of ${js.builtAt.toISOString().slice(0, 16)}`,
        measured: `${kb.toFixed(1)} kB gzip (${js.files.length} files)`,
        goal: `<= ${BENCH_INITIAL_JS_GOAL_KB} kB gzip`,
        met: kb <= BENCH_INITIAL_JS_GOAL_KB,
      });
    } catch (err) {
      say(`  client: not measured (${err instanceof Error ? err.message : String(err)})`);
    }
  }

  // ---- the table ----
  const cpu = os.cpus();
  say('\n' + '='.repeat(HEADER.length));
  say(`Keepwell benchmark, ${started.toISOString()}`);
  say(`Machine: node ${process.version}, ${cpu[0]?.model.trim() ?? 'unknown CPU'}, ${cpu.length} cores, ${Math.round(os.totalmem() / 2 ** 30)} GiB RAM, ${os.type()} ${os.release()}`);
  say(
    `MariaDB ${server.version}: innodb_flush_log_at_trx_commit=${server.flush}, doublewrite=${server.doublewrite ? 'on' : 'off'}, ` +
      `buffer pool ${Math.round(Number(server.bp) / 2 ** 20)} MiB, data on ${onTmpfs ? 'tmpfs' : 'disk'} (${base})`,
  );
  say(`Dataset: ${counts.labs} labs, ${counts.users} members, ${Number(counts.audit).toLocaleString('en-US')} audit rows; sessions grow as the sign-in run adds them.`);
  say(`Load: autocannon over loopback, no pipelining, ${SECONDS} s per run after ${WARMUP} s warm-up. App in ${workers.length ? `${workers.length} worker processes of a child (cluster module, as \`npm start\`)` : 'one child process'} (production config, pool of ${process.env.KW_BENCH_POOL ?? 20} connections per process, sign-in IP limiter lifted). App and raw reach MariaDB over its socket; the app's chamber-log imports over TCP (server/db/bulk.ts). Raw: mysql2 pool of ${RAW_POOL_SIZE}, app account, as many async loops as HTTP connections.`);
  say('per s: app = responses/s, raw = operations/s (an operation may be several statements), both count ÷ wall time of the run. p50/p99 from every response (ms, not rounded). app÷raw = app req/s ÷ raw ops/s.');
  say(`CPU%: share of one core used during the run by the app server (all its processes) / mariadbd / load generator (this process) / everything else; all share these ${cpu.length} cores.`);
  const busy = rows.filter((r) => (r.m.cpu?.others ?? 0) > 15);
  if (busy.length > 0) say(`! Other processes used more than 15% of a core during ${busy.length} of ${rows.length} runs (column "oth"): those figures are low.`);
  say(`Load average (1 min) at start ${loadStart.toFixed(2)}, at end ${os.loadavg()[0].toFixed(2)}.`);
  say('='.repeat(HEADER.length));
  say(HEADER);
  let last = '';
  for (const r of rows) {
    if (r.kind === 'app' && last) say('');
    last = r.scenario || last;
    say(rowLine(r));
  }
  for (const f of failures) say(`${f.scenario.padEnd(10)}  ✗ failed: ${f.message}`);
  say('='.repeat(HEADER.length));
  if (goals.length > 0) {
    say('Goals (from the speed issue; ratios count more than absolute figures on a shared machine):');
    say(['scenario'.padEnd(10), 'measured at'.padEnd(34), 'figure'.padEnd(34), 'goal'.padEnd(30), 'met'].join('  '));
    for (const g of goals) say([g.scenario.padEnd(10), clip(g.what, 34).padEnd(34), clip(g.measured, 34).padEnd(34), clip(g.goal, 30).padEnd(30), g.met ? 'yes' : 'NO'].join('  '));
    say(`${goals.filter((g) => g.met).length} of ${goals.length} goals met.`);
    say('='.repeat(HEADER.length));
  }

  if (process.env.BENCH_JSON) {
    writeFileSync(
      process.env.BENCH_JSON,
      JSON.stringify({ date: started.toISOString(), node: process.version, cpu: cpu[0]?.model, cores: cpu.length, seconds: SECONDS, mariadb: server, rows, goals, failures }, null, 2),
    );
    say(`Results written to ${process.env.BENCH_JSON}`);
  }
  return failures.length === 0;
}

/** One line per goal part (ratio, p50, p99) for one app run and the raw runs beside it. */
function checkGoal(scenario: string, goal: Goal, app: Row, raws: Row[]): GoalResult[] {
  const out: GoalResult[] = [];
  const at = `${app.what}, ${app.concurrency} conn`;
  if (goal.ratio != null) {
    const ref = goal.against ? raws.find((r) => r.what.includes(goal.against!)) : raws[raws.length - 1];
    if (ref) {
      const ratio = app.m.rate / ref.m.rate;
      out.push({ scenario, what: at, measured: `app÷raw ${ratio.toFixed(2)} (vs ${ref.what})`, goal: `app÷raw >= ${goal.ratio}`, met: ratio >= goal.ratio });
    }
  }
  const latency = !goal.latencyAt || goal.latencyAt.includes(app.concurrency);
  if (latency && goal.p50Max != null) {
    out.push({ scenario, what: at, measured: `p50 ${fmt(app.m.p50, 1)} ms`, goal: `p50 <= ${goal.p50Max} ms`, met: app.m.p50 <= goal.p50Max });
  }
  if (latency && goal.p99Max != null) {
    out.push({ scenario, what: at, measured: `p99 ${fmt(app.m.p99, 1)} ms`, goal: `p99 < ${goal.p99Max} ms`, met: app.m.p99 < goal.p99Max });
  }
  return out;
}

function describe(load: HttpLoad): string {
  const r = load.requests?.[0];
  return `${r?.method ?? load.method ?? 'GET'} ${r?.path ?? load.path ?? '/'}`;
}

let failed = false;
try {
  failed = !(await main());
} catch (err) {
  failed = true;
  console.error(abort.requested ? '\nInterrupted.' : `\nBenchmark failed: ${err instanceof Error ? (err.stack ?? err.message) : err}`);
} finally {
  const t = performance.now();
  await cleanup();
  say(`Cleaned up in ${secs(t)} s. Wall time ${secs(wall0)} s.`);
}
process.exit(failed ? (abort.requested ? 130 : 1) : 0);
