/** Out-of-specification results: the bench step, the investigation, and the in-app notices that announce them. */
import { Router } from 'express';
import { z } from 'zod';
import { closeInvestigationInput, confirmInput, remeasureInput } from '../../shared/schemas/oos';
import { requireMember, requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import { idParam, notFound, parse } from '../http/errors';
import { closeInvestigation, confirmAtBench, investigationsOf, markNotificationsRead, notificationsFor, remeasure } from '../services/oos';
import { studyExists } from '../services/study/detail';

const actor = (u: Express.User) => ({ id: u.id, labId: u.labId, role: u.role });

export function oosRoutes(db: Db): Router {
  const r = Router();

  r.get('/studies/:id/investigations', requireMember, async (req, res) => {
    const me = member(req);
    const studyId = idParam(req.params.id);
    if (!(await studyExists(db, me.labId, studyId))) throw notFound('No such study in your lab');
    res.json({ investigations: await investigationsOf(db, me.labId, { studyId }) });
  });

  r.get('/investigations/:id', requireMember, async (req, res) => {
    const me = member(req);
    const [one] = await investigationsOf(db, me.labId, { id: idParam(req.params.id) });
    if (!one) throw notFound('No such investigation in your lab');
    res.json({ investigation: one });
  });

  const answer = async (labId: number, id: number) => {
    const [one] = await investigationsOf(db, labId, { id });
    return { investigation: one };
  };

  r.post('/investigations/:id/remeasure', requireMember, async (req, res) => {
    const id = idParam(req.params.id);
    const input = parse(remeasureInput, req.body);
    await remeasure(db, actor(member(req)), id, input);
    res.json(await answer(member(req).labId, id));
  });

  r.post('/investigations/:id/confirm', requireMember, async (req, res) => {
    const id = idParam(req.params.id);
    const { comment } = parse(confirmInput, req.body);
    await confirmAtBench(db, actor(member(req)), id, comment);
    res.json(await answer(member(req).labId, id));
  });

  r.post('/investigations/:id/close', requireRole('formulator'), async (req, res) => {
    const id = idParam(req.params.id);
    const input = parse(closeInvestigationInput, req.body);
    await closeInvestigation(db, actor(member(req)), id, input);
    res.json(await answer(member(req).labId, id));
  });

  r.get('/notifications', requireMember, async (req, res) => {
    res.json(await notificationsFor(db, member(req)));
  });

  r.post('/notifications/read', requireMember, async (req, res) => {
    const input = parse(z.strictObject({ ids: z.union([z.array(z.number().int().positive()).max(200), z.literal('all')]) }), req.body);
    await markNotificationsRead(db, member(req), input.ids);
    res.json(await notificationsFor(db, member(req)));
  });

  return r;
}
