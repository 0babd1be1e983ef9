/**
 * The wrong-password lockout under simultaneous attempts, and answers that never tell a real address
 * from an unknown one (server/auth/lockout.ts).
 */
import { and, eq, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { LOCKOUT } from '../../server/auth/lockout';
import { loadConfig } from '../../server/config';
import { auditLog, users } from '../../server/db/schema';
import { createTestApp, DEMO, DEMO_PASSWORD, type TestApp } from '../helpers/app';
import { unlock, wrongPasswords } from '../helpers/lockout';

let t: TestApp;
beforeAll(async () => {
  // A high per-address limit and one trusted proxy, so these tests see the account lockout alone.
  t = await createTestApp({ signInIpLimit: 10_000, config: loadConfig({ NODE_ENV: 'test', TRUST_PROXY: '1' }) });
});
afterAll(async () => t?.close());

const signIn = (email: string, password: string, ip = '203.0.113.7') =>
  t.client().agent.post('/api/auth/sign-in').set('X-Keepwell-Request', '1').set('X-Forwarded-For', ip).send({ email, password });

async function lockouts(email: string): Promise<number> {
  const [u] = await t.db.select({ id: users.id }).from(users).where(eq(users.email, email));
  const [row] = await t.db
    .select({ n: sql<number>`count(*)` })
    .from(auditLog)
    .where(and(eq(auditLog.action, 'lockout'), eq(auditLog.entityId, String(u.id))));
  return Number(row.n);
}

describe('sign-in lockout, atomic', () => {
  it('40 wrong passwords at the same moment, then the right one: refused until the lock ends', async () => {
    const burst = await Promise.all(Array.from({ length: 40 }, (_, i) => signIn(DEMO.formulator, `wrong-guess-${i}`)));
    const statuses = burst.map((r) => r.status);
    // Exactly the allowed number were checked (401); every other one was refused as locked (429).
    expect(statuses.filter((s) => s === 401)).toHaveLength(LOCKOUT.maxFailures);
    expect(statuses.filter((s) => s === 429)).toHaveLength(40 - LOCKOUT.maxFailures);
    const right = await signIn(DEMO.formulator, DEMO_PASSWORD);
    expect(right.status).toBe(429);
    expect(right.body.error.code).toBe('rate_limited');
    expect(Number(right.headers['retry-after'])).toBeGreaterThan(LOCKOUT.minutes * 60 - 60);
    expect((await wrongPasswords(t.db, DEMO.formulator)).locked).toBe(true);
    expect(await lockouts(DEMO.formulator)).toBe(1);
    await unlock(t.db, DEMO.formulator);
    expect((await signIn(DEMO.formulator, DEMO_PASSWORD)).status).toBe(200);
  });

  it('39 wrong plus the right one in one burst from rotating addresses: the account still locks after 5', async () => {
    const burst = await Promise.all([
      ...Array.from({ length: 39 }, (_, i) => signIn(DEMO.technician, `wrong-guess-${i}`, `198.51.100.${i + 1}`)),
      signIn(DEMO.technician, DEMO_PASSWORD, '198.51.100.200'),
    ]);
    const statuses = burst.map((r) => r.status);
    // At most the 5 attempts allowed were checked; whether the right one was among them depends on arrival order.
    expect(statuses.filter((s) => s === 401 || s === 200).length).toBeLessThanOrEqual(LOCKOUT.maxFailures);
    expect(statuses.filter((s) => s === 429).length).toBeGreaterThanOrEqual(40 - LOCKOUT.maxFailures);
    if (!statuses.includes(200)) {
      expect((await signIn(DEMO.technician, DEMO_PASSWORD, '198.51.100.201')).status).toBe(429);
    }
    await unlock(t.db, DEMO.technician);
  });

  it('a real address and an unknown one get the same answers, status and statements, also once locked', async () => {
    const real = DEMO.otherTechnician;
    const unknown = 'no.such.person@copperbeech.example';
    const answers = async (email: string) => {
      const out: { status: number; body: unknown; retry: boolean }[] = [];
      for (let i = 0; i < LOCKOUT.maxFailures + 2; i++) {
        const r = await signIn(email, `wrong-guess-${i}`);
        out.push({ status: r.status, body: r.body, retry: Boolean(r.headers['retry-after']) });
      }
      return out;
    };
    const a = await answers(real);
    const b = await answers(unknown);
    expect(a).toEqual(b);
    expect(a.map((x) => x.status)).toEqual([401, 401, 401, 401, 401, 429, 429]);
    await unlock(t.db, real);
    await unlock(t.db, unknown);
  });

  it('a wrong password costs the same database work for a real address and an unknown one', async () => {
    // Timing follows the work: the same bcrypt cost (a stand-in hash of the same cost for unknown
    // addresses) and the same SQL statements. Record the statements the app sends for each.
    const seen: string[] = [];
    const pool = t.pool as unknown as {
      query: (...a: unknown[]) => unknown;
      execute: (...a: unknown[]) => unknown;
      getConnection: (...a: unknown[]) => Promise<Record<string, (...a: unknown[]) => unknown>>;
    };
    const orig = { query: pool.query, execute: pool.execute, getConnection: pool.getConnection };
    const text = (q: unknown) => (typeof q === 'string' ? q : (q as { sql?: string })?.sql ?? String(q)).replace(/\s+/g, ' ').trim();
    pool.query = function (this: unknown, ...a: unknown[]) {
      seen.push(text(a[0]));
      return orig.query.apply(this, a);
    };
    pool.execute = function (this: unknown, ...a: unknown[]) {
      seen.push(text(a[0]));
      return orig.execute.apply(this, a);
    };
    pool.getConnection = async function (this: unknown, ...a: unknown[]) {
      const conn = await orig.getConnection.apply(this, a);
      for (const m of ['query', 'execute'] as const) {
        const f = conn[m];
        if ((f as { wrapped?: boolean }).wrapped) continue;
        const w = function (this: unknown, ...b: unknown[]) {
          seen.push(text(b[0]));
          return f.apply(this, b);
        };
        (w as { wrapped?: boolean }).wrapped = true;
        conn[m] = w;
      }
      return conn;
    };
    try {
      const statementsFor = async (email: string) => {
        seen.length = 0;
        expect((await signIn(email, 'not-the-password')).status).toBe(401);
        return [...seen];
      };
      const realSql = await statementsFor(DEMO.otherOwner);
      const unknownSql = await statementsFor('nobody.here@copperbeech.example');
      expect(realSql.length).toBeGreaterThan(2);
      expect(realSql).toEqual(unknownSql);
    } finally {
      Object.assign(pool, orig);
      await unlock(t.db, DEMO.otherOwner);
      await unlock(t.db, 'nobody.here@copperbeech.example');
    }
  });
});

describe('the same lockout for signing a decision and changing a password', () => {
  it('20 wrong current passwords at once when changing it: 5 checked, then locked for sign-in too', async () => {
    const tech = await t.signIn(DEMO.otherTechnician);
    const burst = await Promise.all(
      Array.from({ length: 20 }, (_, i) => tech.post('/api/account/password', { currentPassword: `wrong-${i}-guess`, newPassword: 'lantern over the moor' })),
    );
    const statuses = burst.map((r) => r.status);
    expect(statuses.filter((s) => s === 403)).toHaveLength(LOCKOUT.maxFailures);
    expect(statuses.filter((s) => s === 429)).toHaveLength(20 - LOCKOUT.maxFailures);
    expect(burst.find((r) => r.status === 429)!.body.error.fields).toHaveProperty('currentPassword');
    const right = await tech.post('/api/account/password', { currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor' });
    expect(right.status).toBe(429);
    expect((await signIn(DEMO.otherTechnician, DEMO_PASSWORD)).status).toBe(429);
    await unlock(t.db, DEMO.otherTechnician);
  });
});

describe('sign-in over plain HTTP when the app is published over HTTPS', () => {
  it('answers a clear error naming the https address instead of a 200 without a cookie', async () => {
    const https = await createTestApp({ config: loadConfig({ NODE_ENV: 'test', PUBLIC_URL: 'https://stability.example.com' }) });
    try {
      const res = await https.client().post('/api/auth/sign-in', { email: DEMO.owner, password: DEMO_PASSWORD });
      expect(res.status).toBe(403);
      expect(res.body.error.code).toBe('https_required');
      expect(res.body.error.message).toContain('https://stability.example.com');
      expect(res.headers['set-cookie']).toBeUndefined();
      // Over HTTPS (here: a trusted proxy that says so) it signs in and the cookie is Secure.
      const proxied = await createTestApp({ config: loadConfig({ NODE_ENV: 'test', PUBLIC_URL: 'https://stability.example.com', TRUST_PROXY: '1' }) });
      try {
        const ok = await proxied
          .client()
          .agent.post('/api/auth/sign-in')
          .set('X-Keepwell-Request', '1')
          .set('X-Forwarded-Proto', 'https')
          .send({ email: DEMO.owner, password: DEMO_PASSWORD });
        expect(ok.status).toBe(200);
        expect(String(ok.headers['set-cookie'])).toMatch(/Secure/);
      } finally {
        await proxied.close();
      }
    } finally {
      await https.close();
    }
  });
});

describe('headers', () => {
  it('forbids framing in both headers: X-Frame-Options DENY and frame-ancestors none', async () => {
    const res = await t.client().get('/api/health');
    expect(res.headers['x-frame-options']).toBe('DENY');
    expect(res.headers['content-security-policy']).toContain("frame-ancestors 'none'");
  });
});
