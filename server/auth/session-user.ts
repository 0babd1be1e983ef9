import { and, eq } from 'drizzle-orm';
import type { Request } from 'express';
import type { Role } from '../../shared/roles';
import type { SessionUser } from '../../shared/schemas/auth';
import type { Db } from '../db/client';
import { labs, users } from '../db/schema';
import { HttpError } from '../http/errors';

declare global {
  // eslint-disable-next-line @typescript-eslint/no-namespace
  namespace Express {
    interface User {
      id: number;
      name: string;
      email: string;
      role: Role;
      labId: number;
      /** users.version when the member was read (see server/auth/session-store.ts). */
      version: number;
      lab: { id: number; name: string; timeZone: string; dateFormat: string };
    }
  }
}

/** Loads a member with their lab, or null when gone or disabled. */
export async function loadMember(db: Db, userId: number): Promise<Express.User | null> {
  const rows = await db
    .select({
      id: users.id,
      name: users.name,
      email: users.email,
      role: users.role,
      labId: users.labId,
      version: users.version,
      labName: labs.name,
      timeZone: labs.timeZone,
      dateFormat: labs.dateFormat,
    })
    .from(users)
    .innerJoin(labs, eq(labs.id, users.labId))
    .where(and(eq(users.id, userId), eq(users.active, true)))
    .limit(1);
  const r = rows[0];
  if (!r) return null;
  return {
    id: r.id,
    name: r.name,
    email: r.email,
    role: r.role,
    labId: r.labId,
    version: r.version,
    lab: { id: r.labId, name: r.labName, timeZone: r.timeZone, dateFormat: r.dateFormat },
  };
}

export function toSessionUser(u: Express.User): SessionUser {
  return { id: u.id, name: u.name, email: u.email, role: u.role, lab: u.lab };
}

/** The signed-in member, or a 401. */
export function member(req: Request): Express.User {
  if (!req.user) throw new HttpError(401, 'unauthenticated', 'Please sign in');
  return req.user;
}
