import { Router } from 'express';
import type { Db } from '../db/client';

/** Mounted at /api: invitations, password reset, the development Outbox. */
export function accountRoutes(_db: Db): Router {
  const r = Router();
  return r;
}
