import { and, eq, sql } from 'drizzle-orm';
import { Router } from 'express';
import { memberRoleInput, type Member } from '../../shared/schemas/auth';
import { endSessionsOf, memberVersionChanged } from '../auth/end-sessions';
import { clearLockout } from '../auth/lockout';
import { requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db, DbOrTx } from '../db/client';
import { rows } from '../db/prepared';
import { users } from '../db/schema';
import { conflict, idParam, notFound, parse } from '../http/errors';
import { audit } from '../services/audit';

const columns = {
  id: users.id,
  name: users.name,
  email: users.email,
  role: users.role,
  active: users.active,
  lastSignInAt: users.lastSignInAt,
};

/** The lab's members, by name (a prepared statement: the owners' list is read often). */
export const MEMBER_LIST = 'SELECT id, name, email, role, active, last_sign_in_at AS lastSignInAt FROM users WHERE lab_id = ? ORDER BY name';

function toMember(r: { id: number; name: string; email: string; role: Member['role']; active: boolean; lastSignInAt: Date | null }): Member {
  return { ...r, lastSignInAt: r.lastSignInAt?.toISOString() ?? null };
}

/** One member of the given lab, or 404 (another lab's ids look exactly like unknown ids). */
async function findMember(db: DbOrTx, labId: number, id: number, lock = false) {
  const q = db.select(columns).from(users).where(and(eq(users.labId, labId), eq(users.id, id))).limit(1);
  const [row] = lock ? await q.for('update') : await q;
  if (!row) throw notFound('No such member in your lab');
  return row;
}

export function memberRoutes(db: Db): Router {
  const r = Router();
  r.use(requireRole('owner'));

  r.get('/', async (req, res) => {
    const me = member(req);
    const list = await rows<{ id: number; name: string; email: string; role: Member['role']; active: number; lastSignInAt: Date | null }>(db, MEMBER_LIST, [me.labId]);
    res.json({ members: list.map((m) => toMember({ ...m, active: m.active === 1 })) });
  });

  r.get('/:id', async (req, res) => {
    const me = member(req);
    res.json({ member: toMember(await findMember(db, me.labId, idParam(req.params.id))) });
  });

  r.patch('/:id', async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(memberRoleInput, req.body);
    const updated = await db.transaction(async (tx) => {
      const before = await findMember(tx, me.labId, id, true);
      if (before.role === input.role) return before;
      if (before.role === 'owner') {
        const [{ owners }] = await tx
          .select({ owners: sql<number>`count(*)` })
          .from(users)
          .where(and(eq(users.labId, me.labId), eq(users.role, 'owner'), eq(users.active, true)))
          .for('update');
        if (Number(owners) <= 1) throw conflict('A lab needs at least one owner: make someone else owner first', { role: 'The last owner cannot be demoted' });
      }
      await tx.update(users).set({ role: input.role }).where(and(eq(users.labId, me.labId), eq(users.id, id)));
      // Their sessions carry on with the new role; a session saved with the old version meanwhile is refused.
      await memberVersionChanged(tx, id, 'all');
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'user',
        entityId: id,
        oldValue: { role: before.role },
        newValue: { role: input.role },
      });
      return { ...before, role: input.role };
    });
    res.json({ member: toMember(updated) });
  });

  /** Disables a member: they cannot sign in, and their open sessions end at once. */
  r.post('/:id/disable', async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    if (id === me.id) {
      // Still 404 for another lab's id: look it up first.
      await findMember(db, me.labId, id);
      throw conflict('You cannot disable your own account: ask another owner', { active: 'You cannot disable yourself' });
    }
    const updated = await db.transaction(async (tx) => {
      const before = await findMember(tx, me.labId, id, true);
      if (!before.active) return before;
      if (before.role === 'owner') {
        const [{ owners }] = await tx
          .select({ owners: sql<number>`count(*)` })
          .from(users)
          .where(and(eq(users.labId, me.labId), eq(users.role, 'owner'), eq(users.active, true)))
          .for('update');
        if (Number(owners) <= 1) throw conflict('A lab needs at least one active owner', { active: 'The last owner cannot be disabled' });
      }
      await tx.update(users).set({ active: false }).where(and(eq(users.labId, me.labId), eq(users.id, id)));
      await memberVersionChanged(tx, id, 'none');
      const ended = await endSessionsOf(tx, id);
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'user',
        entityId: id,
        oldValue: { active: true },
        newValue: { active: false, sessionsEnded: ended },
      });
      return { ...before, active: false };
    });
    res.json({ member: toMember(updated) });
  });

  r.post('/:id/enable', async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const updated = await db.transaction(async (tx) => {
      const before = await findMember(tx, me.labId, id, true);
      if (before.active) return before;
      await tx.update(users).set({ active: true }).where(and(eq(users.labId, me.labId), eq(users.id, id)));
      await clearLockout(tx, before.email);
      await audit(tx, { labId: me.labId, userId: me.id, action: 'update', entity: 'user', entityId: id, oldValue: { active: false }, newValue: { active: true } });
      return { ...before, active: true };
    });
    res.json({ member: toMember(updated) });
  });

  return r;
}
