/**
 * `npm test`: type-check, build the client (browser tests use it), then every
 * vitest project (unit, API on a real MariaDB, browser in Debian's chromium).
 * Ends with one line "keepwell: N passed, N failed, N skipped".
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, rmSync } from 'node:fs';
import { performance } from 'node:perf_hooks';

const t0 = performance.now();
const args = process.argv.slice(2);
const steps: { name: string; ok: boolean; seconds: number }[] = [];

function step(name: string, cmd: string, cmdArgs: string[]): boolean {
  const start = performance.now();
  console.log(`\n▶ ${name}: ${cmd} ${cmdArgs.join(' ')}`);
  const r = spawnSync(cmd, cmdArgs, { stdio: 'inherit', env: { ...process.env, FORCE_COLOR: process.env.CI ? '0' : '1' } });
  const ok = r.status === 0;
  steps.push({ name, ok, seconds: (performance.now() - start) / 1000 });
  return ok;
}

mkdirSync('test-results', { recursive: true });
const report = 'test-results/vitest.json';
rmSync(report, { force: true });

step('type-check', 'npx', ['vue-tsc', '--noEmit', '-p', 'tsconfig.json']);
const built = step('client build', 'npx', ['vite', 'build', '--logLevel', 'warn']);
const vitestArgs = ['vitest', 'run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`, ...args];
if (!built) vitestArgs.push('--project', 'unit', '--project', 'api');
step('tests', 'npx', vitestArgs);

let passed = 0;
let failed = 0;
let skipped = 0;
if (existsSync(report)) {
  const r = JSON.parse(readFileSync(report, 'utf8')) as {
    numPassedTests: number;
    numFailedTests: number;
    numPendingTests: number;
    numTodoTests: number;
    testResults: { status: string; assertionResults: unknown[] }[];
  };
  passed = r.numPassedTests;
  failed = r.numFailedTests + r.testResults.filter((f) => f.status === 'failed' && f.assertionResults.length === 0).length;
  skipped = r.numPendingTests + r.numTodoTests;
}
const failedSteps = steps.filter((s) => !s.ok && s.name !== 'tests');
failed += failedSteps.length;
if (steps.find((s) => s.name === 'tests' && !s.ok) && failed === 0) failed = 1;

console.log('\nSummary');
for (const s of steps) console.log(`  ${s.ok ? 'ok  ' : 'FAIL'} ${s.name.padEnd(14)} ${s.seconds.toFixed(1)} s`);
console.log(`  total ${((performance.now() - t0) / 1000).toFixed(1)} s (each failed step above counts as one failure)`);
console.log(`keepwell: ${passed} passed, ${failed} failed, ${skipped} skipped`);
process.exit(failed > 0 ? 1 : 0);
