import type { RequestHandler } from 'express';
import { HttpError } from './errors';

/** Every state-changing API call must carry this header; browsers cannot add it cross-site without CORS. */
export const CSRF_HEADER = 'x-keepwell-request';
const SAFE = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * CSRF defence in depth: SameSite=Lax session cookie, plus a required custom
 * header, plus an Origin check (when the browser sends Origin it must be ours).
 */
export function csrfGuard(publicOrigin?: string): RequestHandler {
  return (req, _res, next) => {
    if (SAFE.has(req.method)) return next();
    if (req.get(CSRF_HEADER) !== '1') {
      return next(new HttpError(403, 'csrf', `Missing the ${CSRF_HEADER} header required on changes`));
    }
    const origin = req.get('origin');
    if (origin) {
      const own = publicOrigin ?? `${req.protocol}://${req.get('host')}`;
      if (origin !== own) return next(new HttpError(403, 'csrf', 'Cross-site request refused'));
    }
    next();
  };
}
