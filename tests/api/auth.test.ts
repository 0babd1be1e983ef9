import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eq, sql } from 'drizzle-orm';
import { auditLog, users } from '../../server/db/schema';
import { createTestApp, DEMO, DEMO_PASSWORD, type TestApp } from '../helpers/app';
import { unlock } from '../helpers/lockout';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => t?.close());

const sessionCookie = (res: { headers: Record<string, unknown> }) =>
  ((res.headers['set-cookie'] as string[] | undefined) ?? []).find((c) => c.startsWith('kw.sid='))?.split(';')[0];

describe('health', () => {
  it('reports the database as up', async () => {
    const res = await t.client().get('/api/health');
    expect(res.status).toBe(200);
    expect(res.body).toEqual({ status: 'ok', database: 'up' });
  });
});

describe('sign-in', () => {
  it('signs in a demo owner and answers who they are', async () => {
    const c = t.client();
    const res = await c.post('/api/auth/sign-in', { email: DEMO.owner, password: DEMO_PASSWORD });
    expect(res.status).toBe(200);
    expect(res.body.user).toMatchObject({ email: DEMO.owner, role: 'owner', lab: { name: 'Larkspur Skin Studio' } });
    expect(res.body.user.passwordHash).toBeUndefined();
    const me = await c.get('/api/auth/me');
    expect(me.status).toBe(200);
    expect(me.body.user.role).toBe('owner');
  });

  it('accepts the e-mail in any case and with spaces around it', async () => {
    const res = await t.client().post('/api/auth/sign-in', { email: `  ${DEMO.technician.toUpperCase()} `, password: DEMO_PASSWORD });
    expect(res.status).toBe(200);
  });

  it('sets an HttpOnly, SameSite=Lax cookie with our own name', async () => {
    const res = await t.client().post('/api/auth/sign-in', { email: DEMO.formulator, password: DEMO_PASSWORD });
    const raw = (res.headers['set-cookie'] as unknown as string[]).find((c) => c.startsWith('kw.sid='))!;
    expect(raw).toMatch(/HttpOnly/i);
    expect(raw).toMatch(/SameSite=Lax/i);
    expect(raw).not.toMatch(/connect\.sid/);
  });

  it('changes the session id at sign-in', async () => {
    const c = t.client();
    // A failed attempt leaves no session; create one by signing in, then sign in again as someone else.
    const first = await c.post('/api/auth/sign-in', { email: DEMO.technician, password: DEMO_PASSWORD });
    const second = await c.post('/api/auth/sign-in', { email: DEMO.formulator, password: DEMO_PASSWORD });
    expect(sessionCookie(first)).toBeTruthy();
    expect(sessionCookie(second)).toBeTruthy();
    expect(sessionCookie(second)).not.toBe(sessionCookie(first));
    expect((await c.get('/api/auth/me')).body.user.email).toBe(DEMO.formulator);
  });

  it('refuses a wrong password without saying whether the account exists', async () => {
    const wrong = await t.client().post('/api/auth/sign-in', { email: DEMO.formulator, password: 'not-the-password' });
    const unknown = await t.client().post('/api/auth/sign-in', { email: 'nobody@larkspur.example', password: 'whatever-it-is' });
    expect(wrong.status).toBe(401);
    expect(unknown.status).toBe(401);
    expect(wrong.body.error.message).toBe(unknown.body.error.message);
    await unlock(t.db, DEMO.formulator);
  });

  it('answers 401 to /me without a session', async () => {
    const res = await t.client().get('/api/auth/me');
    expect(res.status).toBe(401);
    expect(res.body.error.code).toBe('unauthenticated');
  });

  it('ends the session at sign-out', async () => {
    const c = await t.signIn(DEMO.technician);
    expect((await c.get('/api/auth/me')).status).toBe(200);
    const out = await c.post('/api/auth/sign-out');
    expect(out.status).toBe(204);
    expect((await c.get('/api/auth/me')).status).toBe(401);
  });

  it('refuses a disabled member', async () => {
    await t.db.update(users).set({ active: false }).where(eq(users.email, DEMO.otherTechnician));
    const res = await t.client().post('/api/auth/sign-in', { email: DEMO.otherTechnician, password: DEMO_PASSWORD });
    expect(res.status).toBe(401);
    await t.db.update(users).set({ active: true }).where(eq(users.email, DEMO.otherTechnician));
    await unlock(t.db, DEMO.otherTechnician);
  });
});

describe('lockout', () => {
  it('locks an account after 5 failures with 429, even for the right password, and audits it', async () => {
    for (let i = 0; i < 5; i++) {
      const res = await t.client().post('/api/auth/sign-in', { email: DEMO.otherOwner, password: `wrong-${i}-password` });
      expect(res.status).toBe(401);
    }
    const locked = await t.client().post('/api/auth/sign-in', { email: DEMO.otherOwner, password: DEMO_PASSWORD });
    expect(locked.status).toBe(429);
    expect(locked.body.error.code).toBe('rate_limited');
    expect(Number(locked.headers['retry-after'])).toBeGreaterThan(0);
    const [row] = await t.db.select({ n: sql<number>`count(*)` }).from(auditLog).where(eq(auditLog.action, 'lockout'));
    expect(Number(row.n)).toBe(1);
  });
});

describe('bad input', () => {
  it('answers malformed JSON with 400 malformed_json', async () => {
    const res = await t
      .client()
      .agent.post('/api/auth/sign-in')
      .set('X-Keepwell-Request', '1')
      .set('Content-Type', 'application/json')
      .send('{"email": "owner@');
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('malformed_json');
    expect(JSON.stringify(res.body)).not.toMatch(/at .*\.ts/); // never a stack trace
  });

  it('names missing, extra, wrongly typed and over-long fields', async () => {
    const missing = await t.client().post('/api/auth/sign-in', { email: DEMO.owner });
    expect(missing.status).toBe(400);
    expect(missing.body.error.fields).toHaveProperty('password');

    const extra = await t.client().post('/api/auth/sign-in', { email: DEMO.owner, password: 'x', admin: true });
    expect(extra.status).toBe(400);
    expect(extra.body.error.fields).toEqual({ admin: 'Unknown field' });

    const wrongType = await t.client().post('/api/auth/sign-in', { email: 42, password: ['a'] });
    expect(wrongType.status).toBe(400);
    expect(Object.keys(wrongType.body.error.fields).sort()).toEqual(['email', 'password']);

    const long = await t.client().post('/api/auth/sign-in', { email: `${'a'.repeat(250)}@x.example`, password: 'p'.repeat(500) });
    expect(long.status).toBe(400);
    expect(long.body.error.fields.email).toMatch(/254/);
    expect(long.body.error.fields.password).toMatch(/200/);
  });

  it('refuses a change without the CSRF header, and a foreign Origin', async () => {
    const noHeader = await t.client().agent.post('/api/auth/sign-in').send({ email: DEMO.owner, password: DEMO_PASSWORD });
    expect(noHeader.status).toBe(403);
    expect(noHeader.body.error.code).toBe('csrf');

    const foreign = await t
      .client()
      .agent.post('/api/auth/sign-in')
      .set('X-Keepwell-Request', '1')
      .set('Origin', 'http://evil.example')
      .send({ email: DEMO.owner, password: DEMO_PASSWORD });
    expect(foreign.status).toBe(403);
  });

  it('answers an unknown API route with a JSON 404', async () => {
    const res = await t.client().get('/api/no-such-thing');
    expect(res.status).toBe(404);
    expect(res.body.error.code).toBe('not_found');
  });

  it('sends strict security headers', async () => {
    const res = await t.client().get('/api/health');
    const csp = String(res.headers['content-security-policy']);
    expect(csp).toContain("default-src 'self'");
    expect(csp).toContain("base-uri 'none'");
    expect(csp).toContain("frame-ancestors 'none'");
    expect(res.headers['x-powered-by']).toBeUndefined();
  });
});

describe('per-IP limit', () => {
  it('answers 429 once an address makes too many failed sign-in attempts', async () => {
    const limited = await createTestApp({ signInIpLimit: 5, signInIpWindowMs: 60_000 });
    let last = 0;
    for (let i = 0; i < 7; i++) {
      const res = await limited.client().post('/api/auth/sign-in', { email: `nobody${i}@larkspur.example`, password: 'whatever-it-is' });
      last = res.status;
      if (last === 429) {
        expect(res.body.error.code).toBe('rate_limited');
        break;
      }
    }
    await limited.close();
    expect(last).toBe(429);
  });
});

describe('session probe', () => {
  it('answers 200 with null when signed out and the member when signed in', async () => {
    expect((await t.client().get('/api/auth/session')).body).toEqual({ user: null });
    const c = await t.signIn(DEMO.formulator);
    expect((await c.get('/api/auth/session')).body.user.email).toBe(DEMO.formulator);
  });
});
