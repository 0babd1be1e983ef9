import { Router } from 'express';
import { z } from 'zod';
import { attributeSetInput, productTypeParam, studyTemplateInput } from '../../shared/schemas/templates';
import { requireMember, requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import { idParam, parse } from '../http/errors';
import { attributeSets, resetAttributeSet, saveAttributeSet } from '../services/attribute-sets';
import { createTemplate, deleteTemplate, draftFromStudy, draftFromTemplate, listTemplates } from '../services/study/templates';
import type { Actor } from '../services/study/common';

const actorOf = (u: Express.User): Actor => ({ id: u.id, labId: u.labId, timeZone: u.lab.timeZone });
const productType = (v: unknown) => parse(z.strictObject({ productType: productTypeParam }), { productType: v }, 'params').productType;

/** Mounted at /api: whole-study templates, plan drafts to start from, attribute sets per product type. */
export function studyTemplateRoutes(db: Db): Router {
  const r = Router();
  const formulator = requireRole('formulator');

  r.get('/study-templates', formulator, async (req, res) => {
    res.json({ templates: await listTemplates(db, member(req).labId) });
  });

  r.post('/study-templates', formulator, async (req, res) => {
    const me = member(req);
    const input = parse(studyTemplateInput, req.body);
    res.status(201).json({ template: await createTemplate(db, actorOf(me), input) });
  });

  r.delete('/study-templates/:id', formulator, async (req, res) => {
    const me = member(req);
    await deleteTemplate(db, actorOf(me), idParam(req.params.id));
    res.status(204).end();
  });

  /** A plan draft from a template: conditions, checkpoints, attributes with criteria, samples and container. */
  r.get('/study-templates/:id/draft', formulator, async (req, res) => {
    res.json(await draftFromTemplate(db, member(req).labId, idParam(req.params.id)));
  });

  /** A plan draft copied from a previous study: its product and plan, without batches, dates or people. */
  r.get('/studies/:id/plan-draft', formulator, async (req, res) => {
    res.json(await draftFromStudy(db, member(req).labId, idParam(req.params.id)));
  });

  r.get('/attribute-sets', requireMember, async (req, res) => {
    res.json({ sets: await attributeSets(db, member(req).labId) });
  });

  r.put('/attribute-sets/:productType', formulator, async (req, res) => {
    const me = member(req);
    const type = productType(req.params.productType);
    const { attributeIds } = parse(attributeSetInput, req.body);
    res.json({ set: await saveAttributeSet(db, actorOf(me), type, attributeIds) });
  });

  /** Back to the default set. */
  r.delete('/attribute-sets/:productType', formulator, async (req, res) => {
    const me = member(req);
    res.json({ set: await resetAttributeSet(db, actorOf(me), productType(req.params.productType)) });
  });

  return r;
}
