import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { auditLog, users } from '../../server/db/schema';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;
let ids: Record<string, number>;

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
  ids = { ...t.labs[0].members, ...t.labs[1].members };
});
afterAll(async () => t?.close());

describe('role matrix of the member routes', () => {
  const cases: [string, () => Client, number][] = [
    ['owner', () => owner, 200],
    ['formulator', () => formulator, 403],
    ['technician', () => technician, 403],
  ];
  it.each(cases)('%s listing members gets %i', async (_role, who, status) => {
    const res = await who().get('/api/members');
    expect(res.status).toBe(status);
    if (status === 403) expect(res.body.error.code).toBe('forbidden');
  });
  it.each(cases)('%s reading one member gets %i', async (_role, who, status) => {
    expect((await who().get(`/api/members/${ids[DEMO.technician]}`)).status).toBe(status);
  });
  it.each(cases)('%s changing a role gets %i', async (_role, who, status) => {
    const res = await who().patch(`/api/members/${ids[DEMO.technician]}`, { role: 'technician' });
    expect(res.status).toBe(status);
  });
  it('anyone signed out gets 401', async () => {
    expect((await t.client().get('/api/members')).status).toBe(401);
  });
});

describe('lab isolation', () => {
  it('lists only the own lab', async () => {
    const res = await owner.get('/api/members');
    const emails = res.body.members.map((m: { email: string }) => m.email);
    expect(emails.sort()).toEqual([DEMO.formulator, DEMO.owner, DEMO.technician].sort());
  });

  it("answers 404 to another lab's member ids, exactly as for unknown ids", async () => {
    const foreign = await otherOwner.get(`/api/members/${ids[DEMO.technician]}`);
    const unknown = await otherOwner.get('/api/members/999999');
    expect(foreign.status).toBe(404);
    expect(unknown.status).toBe(404);
    expect(foreign.body).toEqual(unknown.body);
    const change = await otherOwner.patch(`/api/members/${ids[DEMO.technician]}`, { role: 'owner' });
    expect(change.status).toBe(404);
    const [row] = await t.db.select({ role: users.role }).from(users).where(eq(users.id, ids[DEMO.technician]));
    expect(row.role).toBe('technician');
  });

  it('treats a malformed id as not found', async () => {
    expect((await owner.get('/api/members/abc')).status).toBe(404);
    expect((await owner.get('/api/members/1e3')).status).toBe(404);
  });
});

describe('changing roles', () => {
  it('promotes a technician and writes an audit row in the same change', async () => {
    const id = ids[DEMO.technician];
    const res = await owner.patch(`/api/members/${id}`, { role: 'formulator' });
    expect(res.status).toBe(200);
    expect(res.body.member.role).toBe('formulator');
    const audits = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'user'), eq(auditLog.entityId, String(id)), eq(auditLog.action, 'update')));
    expect(audits).toHaveLength(1);
    expect(audits[0].oldValue).toEqual({ role: 'technician' });
    expect(audits[0].newValue).toEqual({ role: 'formulator' });
    // The member's next request sees the new role (roles are read per request, not cached in the session).
    expect((await technician.get('/api/auth/me')).body.user.role).toBe('formulator');
    await owner.patch(`/api/members/${id}`, { role: 'technician' });
  });

  it('refuses to demote the last owner with 409 naming the field', async () => {
    const res = await owner.patch(`/api/members/${ids[DEMO.owner]}`, { role: 'formulator' });
    expect(res.status).toBe(409);
    expect(res.body.error.fields).toHaveProperty('role');
  });

  it('refuses an unknown role and extra fields with 400', async () => {
    const bad = await owner.patch(`/api/members/${ids[DEMO.technician]}`, { role: 'admin' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields).toHaveProperty('role');
    const extra = await owner.patch(`/api/members/${ids[DEMO.technician]}`, { role: 'owner', labId: 2 });
    expect(extra.status).toBe(400);
    expect(extra.body.error.fields).toHaveProperty('labId');
    const [row] = await t.db.select({ role: users.role }).from(users).where(eq(users.id, ids[DEMO.technician]));
    expect(row.role).toBe('technician');
  });
});
