import { Router } from 'express';
import { cardInput, regionsInput } from '../../shared/schemas/photo-colour';
import { requireMember, requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import type { FileStore } from '../files';
import { idParam, notFound, parse } from '../http/errors';
import { createCard, listCards, markRegions, photoColour, studyPhotoDeltaE } from '../services/photo-colour/marks';
import { studyExists } from '../services/study/detail';
import { todayIn } from '../services/studies';

/** Mounted at /api: the lab's reference cards and the colour measured from a photo's marked regions. */
export function photoColourRoutes(db: Db, files: FileStore): Router {
  const r = Router();

  r.get('/colour-cards', requireMember, async (req, res) => {
    res.json({ cards: await listCards(db, member(req).labId) });
  });

  // A lab setting: formulators and the owner enter a card's published values once.
  r.post('/colour-cards', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    res.status(201).json({ card: await createCard(db, me, parse(cardInput, req.body)) });
  });

  // Each marked photo's corrected swatch and ΔE00 against its batch's initial photo (the study's photo strip).
  r.get('/studies/:id/photo-colours', requireMember, async (req, res) => {
    const me = member(req);
    const studyId = idParam(req.params.id);
    if (!(await studyExists(db, me.labId, studyId))) throw notFound('No such study in your lab');
    const rows = await studyPhotoDeltaE(db, me.labId, studyId);
    res.json({ colours: rows.map((r) => ({ photoId: r.photoId, swatch: r.swatch, deltaE: r.deltaE })) });
  });

  r.get('/photos/:id/colour', requireMember, async (req, res) => {
    res.json(await photoColour(db, member(req).labId, idParam(req.params.id)));
  });

  // Technicians while the checkpoint is open, formulators and the owner also early (as photo uploads).
  r.put('/photos/:id/regions', requireMember, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(regionsInput, req.body);
    await markRegions(db, files, me, id, input, todayIn(me.lab.timeZone));
    res.json(await photoColour(db, me.labId, id));
  });

  return r;
}
