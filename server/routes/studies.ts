import { Router } from 'express';
import type { Db } from '../db/client';

/** Mounted at /api: attributes, studies, samples, checkpoints, the Bench. */
export function studyRoutes(_db: Db): Router {
  const r = Router();
  return r;
}
