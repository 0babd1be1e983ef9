/**
 * `npm test`: type-check, build the client (browser tests use it), then every vitest project (unit,
 * API on a real MariaDB, the API's file tests again on S3, browser in Debian's chromium).
 *
 * The steps run side by side, since each mostly waits on something else (the compiler, MariaDB,
 * Chromium): the type-check; unit + API tests; the client build, then the browser files in groups.
 * Each step's lines are prefixed with its name.
 * Arguments are passed to every vitest run (a file filter that matches nothing in one is fine).
 * Ends with the failed tests and those that passed only on a retry (name and first lines of the
 * error), each step's time, and one line
 * "keepwell: N passed, N failed, N skipped".
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { performance } from 'node:perf_hooks';
import { relative } from 'node:path';
import { createInterface } from 'node:readline';

const t0 = performance.now();
const args = process.argv.slice(2);
const steps: { name: string; ok: boolean; seconds: number }[] = [];

function step(name: string, cmd: string, cmdArgs: string[]): Promise<boolean> {
  const start = performance.now();
  const prefix = `[${name}] `;
  console.log(`${prefix}▶ ${cmd} ${cmdArgs.join(' ')}`);
  const child = spawn(cmd, cmdArgs, { stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, FORCE_COLOR: process.env.CI ? '0' : '1' } });
  for (const stream of [child.stdout, child.stderr]) {
    createInterface({ input: stream }).on('line', (line) => console.log(prefix + line));
  }
  return new Promise((resolve) => {
    child.on('close', (code) => {
      const ok = code === 0;
      steps.push({ name, ok, seconds: (performance.now() - start) / 1000 });
      resolve(ok);
    });
  });
}

mkdirSync('test-results', { recursive: true });
const reports = { api: 'test-results/vitest-api.json' };
const vitest = (report: string, projects: string[]) => [
  'vitest',
  'run',
  '--reporter=default',
  '--reporter=json',
  `--outputFile.json=${report}`,
  '--passWithNoTests',
  ...projects.flatMap((p) => ['--project', p]),
  ...args,
];

/**
 * The browser files in groups of about equal time (each group a vitest with its own MariaDB and
 * Chromium), all started once the client is built, beside the type-check and the unit + API tests.
 * The browser tests mostly wait (page loads, animations, polls): one vitest for all of them left the
 * 2-core machine half idle (557 s user + 65 s sys CPU in 580 s wall, `/usr/bin/time npm test`).
 * Groups are filled longest first from each file's seconds in a recent run (a new file counts 40 s).
 * KEEPWELL_BROWSER_GROUPS sets the count (default 3). With arguments (a file filter, -t) all browser
 * files run in one vitest.
 */
const BROWSER_SECONDS: Record<string, number> = {
  analysis: 84, 'plan-template': 79, a11y: 70, review: 69, 'plan-study': 59, bench: 46, 'photo-colour': 50,
  'bench-find': 41, shell: 41, offline: 40, record: 40, formulas: 38, 'product-file': 32, oos: 25, invitation: 15,
};
const browserFiles = readdirSync('tests/browser').filter((f) => f.endsWith('.test.ts')).sort();
const groupCount = args.length ? 1 : Math.max(1, Number(process.env.KEEPWELL_BROWSER_GROUPS ?? 3));
const groups = Array.from({ length: groupCount }, () => ({ files: [] as string[], seconds: 0 }));
const weight = (f: string) => BROWSER_SECONDS[f.replace(/\.test\.ts$/, '')] ?? 40;
for (const f of [...browserFiles].sort((a, b) => weight(b) - weight(a))) {
  const g = groups.reduce((min, x) => (x.seconds < min.seconds ? x : min));
  g.files.push(args.length ? '' : `tests/browser/${f}`);
  g.seconds += weight(f);
}
const browserReport = (i: number) => `test-results/vitest-browser${i ? `-${i + 1}` : ''}.json`;
const reportFiles = [reports.api, ...groups.map((_, i) => browserReport(i))];
for (const r of reportFiles) rmSync(r, { force: true });

const built = step('client build', 'npx', ['vite', 'build', '--logLevel', 'warn']);
await Promise.all([
  step('type-check', 'npx', ['vue-tsc', '--noEmit', '-p', 'tsconfig.json']),
  step('unit+api', 'npx', vitest(reports.api, ['unit', 'api', 'api-s3'])),
  ...groups.map(async (g, i) => {
    if (await built) await step(`browser ${i + 1}`, 'npx', [...vitest(browserReport(i), ['browser']), ...g.files.filter(Boolean)]);
  }),
]);

let passed = 0;
let failed = 0;
let skipped = 0;
/** Each failed test and its first message lines, printed again at the end: a CI log shown only by its tail still names them. */
const failures: { what: string; why: string }[] = [];
/** Tests that failed once and passed on their retry: flaky, to be fixed, listed with their first failure. */
const retried: { what: string; why: string }[] = [];
for (const report of reportFiles) {
  if (!existsSync(report)) continue;
  const r = JSON.parse(readFileSync(report, 'utf8')) as {
    numPassedTests: number;
    numFailedTests: number;
    numPendingTests: number;
    numTodoTests: number;
    testResults: {
      name: string;
      status: string;
      message?: string;
      assertionResults: { status: string; fullName: string; failureMessages?: string[] }[];
    }[];
  };
  passed += r.numPassedTests;
  failed += r.numFailedTests + r.testResults.filter((f) => f.status === 'failed' && f.assertionResults.length === 0).length;
  skipped += r.numPendingTests + r.numTodoTests;
  for (const f of r.testResults) {
    const file = relative(process.cwd(), f.name);
    if (f.status === 'failed' && f.assertionResults.length === 0) failures.push({ what: file, why: f.message ?? '' });
    for (const a of f.assertionResults) {
      if (a.status === 'failed') failures.push({ what: `${file} > ${a.fullName}`, why: a.failureMessages?.[0] ?? '' });
      // A test that failed and then passed its retry keeps the first failure's errors (vite.config.ts: retry).
      else if (a.status === 'passed' && a.failureMessages?.length) retried.push({ what: `${file} > ${a.fullName}`, why: a.failureMessages[0] });
    }
  }
}
// A failed step that left no failed test behind (a compile error, a crash, a setup that threw) counts as one.
for (const s of steps) {
  if (s.ok) continue;
  const report = s.name === 'unit+api' ? reports.api : s.name.startsWith('browser ') ? browserReport(Number(s.name.slice(8)) - 1) : null;
  const counted = report && existsSync(report) && (JSON.parse(readFileSync(report, 'utf8')) as { numFailedTests: number }).numFailedTests > 0;
  if (!counted) failed += 1;
}

/** A failure's first lines without colour codes or frames inside node_modules. */
function excerpt(why: string): string[] {
  return why
    .replace(/\u001b\[[0-9;]*m/g, '')
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l && !/^at (.*node_modules|new Promise)/.test(l))
    .slice(0, 8)
    .map((l) => l.slice(0, 300));
}
for (const [title, list] of [
  ['Failed', failures],
  ['Passed only on a retry (flaky: fix these)', retried],
] as const) {
  if (!list.length) continue;
  console.log(`\n${title}`);
  for (const f of list) {
    console.log(`  ${f.what}`);
    for (const l of excerpt(f.why)) console.log(`      ${l}`);
  }
}
console.log('\nSummary');
for (const s of steps) console.log(`  ${s.ok ? 'ok  ' : 'FAIL'} ${s.name.padEnd(14)} ${s.seconds.toFixed(1)} s`);
console.log(`  total ${((performance.now() - t0) / 1000).toFixed(1)} s (each failed step above counts as one failure)`);
if (retried.length) console.log(`  ${retried.length} passed only on a retry (listed above)`);
console.log(`keepwell: ${passed} passed, ${failed} failed, ${skipped} skipped`);
process.exit(failed > 0 ? 1 : 0);
