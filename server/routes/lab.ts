import { eq } from 'drizzle-orm';
import { Router } from 'express';
import { requireMember } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import { poolOf } from '../db/prepared';
import { labs } from '../db/schema';
import { DATABASE_RETRY_SECONDS } from '../http/errors';

export function labRoutes(db: Db): Router {
  const r = Router();
  r.get('/', requireMember, async (req, res) => {
    const me = member(req);
    const [lab] = await db.select().from(labs).where(eq(labs.id, me.labId));
    res.json({ lab: { id: lab.id, name: lab.name, timeZone: lab.timeZone, q10: lab.q10, reminderHour: lab.reminderHour, dateFormat: lab.dateFormat } });
  });
  return r;
}

export function healthRoute(db: Db): Router {
  const r = Router();
  r.get('/', async (_req, res) => {
    try {
      await poolOf(db).query('SELECT 1');
      res.json({ status: 'ok', database: 'up' });
    } catch {
      res.set('Retry-After', String(DATABASE_RETRY_SECONDS)).status(503).json({ status: 'degraded', database: 'down' });
    }
  });
  return r;
}
