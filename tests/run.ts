/**
 * `npm test`: type-check, build the client (browser tests use it), then every vitest project (unit,
 * API on a real MariaDB, the API's file tests again on S3, browser in Debian's chromium).
 *
 * The steps run side by side, since each mostly waits on something else (the compiler, MariaDB,
 * Chromium): the type-check; unit + API tests, then the second half of the browser files; the client
 * build, then the first half of the browser files. Each step's lines are prefixed with its name.
 * Arguments are passed to every vitest run (a file filter that matches nothing in one is fine).
 * Ends with one line "keepwell: N passed, N failed, N skipped".
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { performance } from 'node:perf_hooks';
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
const reports = { api: 'test-results/vitest-api.json', browser: 'test-results/vitest-browser.json', browser2: 'test-results/vitest-browser-2.json' };
for (const r of Object.values(reports)) rmSync(r, { force: true });
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
 * The browser files in two halves of about equal time: the first starts once the client is built, the
 * second once the API tests are done and a core is free (each half is a vitest with its own MariaDB).
 * With arguments (a file filter, -t) all browser files run in one vitest.
 */
const browserFiles = readdirSync('tests/browser').filter((f) => f.endsWith('.test.ts')).sort();
const SECOND_HALF = new Set(['plan-template', 'bench', 'shell', 'formulas'].map((n) => `${n}.test.ts`));
const halves = args.length
  ? [[] as string[]]
  : [browserFiles.filter((f) => !SECOND_HALF.has(f)), browserFiles.filter((f) => SECOND_HALF.has(f))].map((h) => h.map((f) => `tests/browser/${f}`));

const built = step('client build', 'npx', ['vite', 'build', '--logLevel', 'warn']);
await Promise.all([
  step('type-check', 'npx', ['vue-tsc', '--noEmit', '-p', 'tsconfig.json']),
  (async () => {
    await step('unit+api', 'npx', vitest(reports.api, ['unit', 'api', 'api-s3']));
    if (halves[1] && (await built)) await step('browser 2', 'npx', [...vitest(reports.browser2, ['browser']), ...halves[1]]);
  })(),
  (async () => {
    if (await built) await step('browser', 'npx', [...vitest(reports.browser, ['browser']), ...halves[0]]);
  })(),
]);

let passed = 0;
let failed = 0;
let skipped = 0;
for (const report of Object.values(reports)) {
  if (!existsSync(report)) continue;
  const r = JSON.parse(readFileSync(report, 'utf8')) as {
    numPassedTests: number;
    numFailedTests: number;
    numPendingTests: number;
    numTodoTests: number;
    testResults: { status: string; assertionResults: unknown[] }[];
  };
  passed += r.numPassedTests;
  failed += r.numFailedTests + r.testResults.filter((f) => f.status === 'failed' && f.assertionResults.length === 0).length;
  skipped += r.numPendingTests + r.numTodoTests;
}
// A failed step that left no failed test behind (a compile error, a crash, a setup that threw) counts as one.
for (const s of steps) {
  if (s.ok) continue;
  const report = s.name === 'unit+api' ? reports.api : s.name === 'browser' ? reports.browser : s.name === 'browser 2' ? reports.browser2 : null;
  const counted = report && existsSync(report) && (JSON.parse(readFileSync(report, 'utf8')) as { numFailedTests: number }).numFailedTests > 0;
  if (!counted) failed += 1;
}

console.log('\nSummary');
for (const s of steps) console.log(`  ${s.ok ? 'ok  ' : 'FAIL'} ${s.name.padEnd(14)} ${s.seconds.toFixed(1)} s`);
console.log(`  total ${((performance.now() - t0) / 1000).toFixed(1)} s (each failed step above counts as one failure)`);
console.log(`keepwell: ${passed} passed, ${failed} failed, ${skipped} skipped`);
process.exit(failed > 0 ? 1 : 0);
