import type { RequestHandler } from 'express';
import { roleAtLeast, type Role } from '../../shared/roles';
import { HttpError, forbidden } from '../http/errors';

/** "Only an owner may do this", "Only a formulator or above may do this". */
export function roleRefusal(minRole: Role): string {
  return minRole === 'owner' ? 'Only an owner may do this' : `Only a ${minRole} or above may do this`;
}

/** Requires a signed-in member whose role is at least `minRole`. */
export function requireRole(minRole: Role): RequestHandler {
  return (req, _res, next) => {
    if (!req.user) return next(new HttpError(401, 'unauthenticated', 'Please sign in'));
    if (!roleAtLeast(req.user.role, minRole)) return next(forbidden(roleRefusal(minRole)));
    next();
  };
}

export const requireMember = requireRole('technician');
