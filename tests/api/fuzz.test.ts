/**
 * Fuzz: generated bad requests to every route the app mounts, read from the app's own router stack
 * (tests/fuzz/routes.ts), as the owner, formulator and technician of the first demo lab and signed
 * out. Bodies with wrong types, huge strings, unpaired surrogates, nested objects, arrays, nulls,
 * odd numbers, impossible dates and unknown fields; path ids that are huge, negative, not numbers or
 * the other lab's; query strings with impossible dates and garbage; uploads in wrong fields.
 * Each answer is checked (tests/fuzz/harness.ts): no 5xx, no stack trace or SQL text, and a refused
 * request (4xx) wrote no row. Tables a refused request may still change, and why:
 * MAY_CHANGE_WHEN_REFUSED (`sessions`, `password_guards`) and AUDIT_ACTIONS_WHEN_REFUSED ('lockout').
 *
 * The seed is fixed so a failure repeats; FUZZ_SEED=N picks another. A failure prints the request.
 * `npm run fuzz` sends 20 000 with a new seed each run (tests/fuzz/run.ts).
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, DEMO, DEMO_PASSWORD, type TestApp } from '../helpers/app';
import { describeFailure, Fuzzer, seedOtherLab } from '../fuzz/harness';

const SEED = Number(process.env.FUZZ_SEED ?? 20260417);
const REQUESTS = 2_200;

let t: TestApp;
let fuzzer: Fuzzer;

beforeAll(async () => {
  t = await createTestApp({}, { demo: 'full' });
  await seedOtherLab(t.db, t.labs[1], 'UTC');
  fuzzer = new Fuzzer({
    app: t.app,
    admin: t.admin,
    labs: t.labs,
    emails: { owner: DEMO.owner, formulator: DEMO.formulator, technician: DEMO.technician },
    password: DEMO_PASSWORD,
  });
  await fuzzer.start();
}, 60_000);
afterAll(async () => {
  await fuzzer?.stop();
  await t?.close();
});

/**
 * The routes the router files declare, read from their source: `r.get('/path'` and the like in each
 * exported router function, under the prefix server/app.ts mounts that function at.
 */
function declaredRoutes(): string[] {
  const server = fileURLToPath(new URL('../../server/', import.meta.url));
  const prefixes = new Map<string, string>();
  for (const m of readFileSync(join(server, 'app.ts'), 'utf8').matchAll(/api\.use\(\s*(?:'([^']*)',\s*)?(?:\w+,\s*)*(\w+)\(/g)) prefixes.set(m[2], m[1] ?? '');
  const out: string[] = [];
  for (const file of readdirSync(join(server, 'routes')).filter((f) => f.endsWith('.ts'))) {
    const source = readFileSync(join(server, 'routes', file), 'utf8');
    for (const part of source.split(/(?=export function )/)) {
      const name = /^export function (\w+)/.exec(part)?.[1];
      const routes = [...part.matchAll(/\br\.(get|post|put|patch|delete)\(\s*'([^']+)'/g)];
      if (!name || !routes.length) continue;
      if (!prefixes.has(name)) throw new Error(`${file}: router ${name} is not mounted in server/app.ts as "api.use(...)"`);
      for (const r of routes) {
        const path = `/api${prefixes.get(name)}${r[2]}`.replace(/\/$/, '');
        out.push(`${r[1].toUpperCase()} ${path}`);
      }
    }
  }
  return out;
}

describe('fuzz', () => {
  it('reads every route the router files declare from the app itself', () => {
    const found = new Set(fuzzer.routes.map((r) => `${r.method} ${r.path}`));
    const declared = declaredRoutes();
    expect(declared.length).toBeGreaterThan(80);
    expect(declared.filter((r) => !found.has(r))).toEqual([]);
    expect(found.size).toBe(new Set(declared).size);
  });

  it(`answers ${REQUESTS} generated bad requests without a 5xx, without internals, and refused ones write nothing (seed ${SEED})`, async () => {
    const report = await fuzzer.run(REQUESTS, SEED, { maxFailures: 20 });
    const summary = [...report.byStatus].sort((a, b) => a[0] - b[0]).map(([s, n]) => `${s}: ${n}`).join(', ');
    expect(report.failures.map((f) => describeFailure(f, SEED)), `answers by status: ${summary}`).toEqual([]);
    expect(report.sent).toBe(REQUESTS);
    // The generated requests reach validation, not only the role and id checks.
    expect(report.byStatus.get(400) ?? 0).toBeGreaterThan(REQUESTS / 8);
    expect(fuzzer.routeTemplates.size).toBeGreaterThan(25);
    // 300 s: about 70 s on a quiet 2-core machine, over 150 s when the whole suite runs beside it.
  }, 300_000);
});
