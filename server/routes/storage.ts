import { Router } from 'express';
import type { Db } from '../db/client';

/** Mounted at /api. */
export function storageRoutes(_db: Db): Router {
  const r = Router();
  return r;
}
