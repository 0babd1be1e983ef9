/**
 * Changing one's own password while signed in (POST /api/account/password): the
 * current password is checked with the sign-in lockout, the new one follows the
 * reset rules, this session stays and the member's other sessions end.
 */
import { and, eq, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { LOCKOUT } from '../../server/auth/lockout';
import { auditLog, passwordResets, users } from '../../server/db/schema';
import { createTestApp, DEMO, DEMO_PASSWORD, type TestApp } from '../helpers/app';
import { setWrongPasswords, unlock, wrongPasswords } from '../helpers/lockout';

let t: TestApp;

beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => t?.close());

const change = (c: Awaited<ReturnType<TestApp['signIn']>>, body: object) => c.post('/api/account/password', body);

async function sessionsOf(userId: number): Promise<number> {
  const [rows] = (await t.db.execute(sql`SELECT COUNT(*) AS n FROM sessions WHERE JSON_VALUE(data, '$.passport.user') = ${String(userId)}`)) as unknown as [{ n: number }[]];
  return Number(rows[0].n);
}

describe('changing one\'s own password', () => {
  it('checks the current password, keeps this session, ends the others; the old password no longer signs in', async () => {
    const id = t.labs[0].members[DEMO.formulator];
    const here = await t.signIn(DEMO.formulator);
    const elsewhere = await t.signIn(DEMO.formulator);
    expect(await sessionsOf(id)).toBe(2);
    // An open reset link asked for earlier stops working too.
    await t.db.insert(passwordResets).values({ userId: id, tokenHash: 'a'.repeat(64), createdAt: new Date(), expiresAt: new Date(Date.now() + 3_600_000) });

    const res = await change(here, { currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor' });
    expect(res.status, JSON.stringify(res.body)).toBe(200);
    expect(res.body.otherSessionsEnded).toBe(1);
    expect(res.body.message).toMatch(/other session was signed out/);
    expect((await here.get('/api/auth/me')).status).toBe(200);
    expect((await elsewhere.get('/api/auth/me')).status).toBe(401);
    expect(await sessionsOf(id)).toBe(1);
    await expect(t.signIn(DEMO.formulator)).rejects.toThrow(/401/);
    await t.signIn(DEMO.formulator, 'lantern over the moor');
    const [reset] = await t.db.select().from(passwordResets).where(eq(passwordResets.userId, id));
    expect(reset.usedAt).not.toBeNull();

    // Audited as an update of the user, with no password or hash in it.
    const trail = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'user'), eq(auditLog.entityId, String(id)), eq(auditLog.action, 'update')));
    expect(trail).toHaveLength(1);
    expect(trail[0].newValue).toEqual({ password: 'changed', otherSessionsEnded: 1 });
    expect(JSON.stringify(trail[0])).not.toMatch(/\$2[aby]\$|lantern|keepwell-demo/);

    // Back to the demo password for the other tests (it is on no common list).
    expect((await change(here, { currentPassword: 'lantern over the moor', newPassword: DEMO_PASSWORD })).status).toBe(200);
  });

  it('a wrong current password: 403 naming currentPassword, counted towards the sign-in lockout', async () => {
    const id = t.labs[0].members[DEMO.technician];
    const tech = await t.signIn(DEMO.technician);
    const wrong = await change(tech, { currentPassword: 'not-my-password', newPassword: 'lantern over the moor' });
    expect(wrong.status).toBe(403);
    expect(wrong.body.error.fields).toEqual({ currentPassword: 'Wrong password' });
    await t.signIn(DEMO.technician); // the old password still works

    await setWrongPasswords(t.db, DEMO.technician, LOCKOUT.maxFailures - 1);
    expect((await change(tech, { currentPassword: 'still-wrong', newPassword: 'lantern over the moor' })).status).toBe(403);
    const locked = await change(tech, { currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor' });
    expect(locked.status).toBe(429);
    expect(locked.body.error.fields).toHaveProperty('currentPassword');
    const lockout = await t.db.select().from(auditLog).where(and(eq(auditLog.action, 'lockout'), eq(auditLog.entityId, String(id))));
    expect(lockout).toHaveLength(1);
    await unlock(t.db, DEMO.technician);
    await t.signIn(DEMO.technician, DEMO_PASSWORD); // unchanged
  });

  it('a weak or unchanged new password: 400 naming newPassword, and no attempt counted', async () => {
    const id = t.labs[0].members[DEMO.owner];
    const owner = await t.signIn(DEMO.owner);
    for (const [newPassword, message] of [
      ['short', /At least 10 characters/],
      ['password123', /common/],
      ['aaaaaaaaaaaa', /repeated|common/],
      [DEMO.owner, /e-mail/],
      [DEMO_PASSWORD, /different from the current one/],
    ] as const) {
      const res = await change(owner, { currentPassword: DEMO_PASSWORD, newPassword });
      expect(res.status, newPassword).toBe(400);
      expect(res.body.error.fields.newPassword, newPassword).toMatch(message);
    }
    const missing = await change(owner, { newPassword: 'lantern over the moor' });
    expect(missing.status).toBe(400);
    expect(missing.body.error.fields).toHaveProperty('currentPassword');
    expect((await change(owner, { currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor', extra: 1 })).status).toBe(400);
    expect((await wrongPasswords(t.db, DEMO.owner)).failures).toBe(0);
    await t.signIn(DEMO.owner, DEMO_PASSWORD);
  });

  it('needs a session (401) and the CSRF header (403), like every other change', async () => {
    const anon = await t.client().post('/api/account/password', { currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor' });
    expect(anon.status).toBe(401);
    const other = await t.signIn(DEMO.otherOwner);
    const noHeader = await other.agent.post('/api/account/password').send({ currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor' });
    expect(noHeader.status).toBe(403);
    expect(noHeader.body.error.code).toBe('csrf');
    const foreign = await other.agent
      .post('/api/account/password')
      .set('X-Keepwell-Request', '1')
      .set('Origin', 'https://elsewhere.example')
      .send({ currentPassword: DEMO_PASSWORD, newPassword: 'lantern over the moor' });
    expect(foreign.status).toBe(403);
    await t.signIn(DEMO.otherOwner, DEMO_PASSWORD); // unchanged
  });
});
