import { Router, type RequestHandler } from 'express';
import { rateLimit, type Store } from 'express-rate-limit';
import { signInInput } from '../../shared/schemas/auth';
import type { SignInFailure, createPassport } from '../auth/passport';
import { member, toSessionUser } from '../auth/session-user';
import { HttpError, parse } from '../http/errors';
import type { Logger } from '../log';

export interface AuthRouteOptions {
  passport: ReturnType<typeof createPassport>;
  log: Logger;
  cookieName: string;
  /** Sign-in attempts allowed per IP per window. */
  ipLimit: number;
  ipWindowMs: number;
  /** Where attempts are counted: the shared table (SqlRateLimitStore), so every instance counts together. */
  ipStore?: Store;
  /** With an https PUBLIC_URL: its origin. A sign-in over plain HTTP would get no cookie, so it is refused with a clear answer. */
  httpsOrigin?: string;
}

export function authRoutes(o: AuthRouteOptions): Router {
  const r = Router();

  const ipLimiter = rateLimit({
    windowMs: o.ipWindowMs,
    limit: o.ipLimit,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    // Only failed attempts count: a busy lab behind one address can still sign in.
    skipSuccessfulRequests: true,
    ...(o.ipStore ? { store: o.ipStore } : {}),
    handler: (req, _res, next) => {
      o.log.warn(`sign-in rate limit reached for ip ${req.ip}`);
      next(new HttpError(429, 'rate_limited', 'Too many sign-in attempts from this address; wait a few minutes'));
    },
  });

  const validate: RequestHandler = (req, _res, next) => {
    req.body = parse(signInInput, req.body);
    next();
  };

  /** The session cookie is marked Secure: over plain HTTP the browser would drop it and the person would seem signed in, then get 401. */
  const httpsOnly: RequestHandler = (req, _res, next) => {
    if (!o.httpsOrigin || req.secure) return next();
    next(
      new HttpError(
        403,
        'https_required',
        `Sign in at ${o.httpsOrigin}: this address is plain HTTP, and Keepwell only keeps you signed in over HTTPS. (Behind a proxy that ends TLS, set TRUST_PROXY.)`,
      ),
    );
  };

  r.post('/sign-in', httpsOnly, ipLimiter, validate, (req, res, next) => {
    o.passport.authenticate('local', (err: unknown, user: Express.User | false, info?: SignInFailure) => {
      if (err) return next(err);
      if (!user) {
        // The same answer for a real address and an unknown one: 401, or 429 once the address is locked.
        return next(info instanceof HttpError ? info : new HttpError(401, 'unauthenticated', 'E-mail or password is wrong'));
      }
      // passport 0.7 regenerates the session here, so the id changes at sign-in.
      req.logIn(user, (loginErr) => {
        if (loginErr) return next(loginErr);
        res.json({ user: toSessionUser(user) });
      });
    })(req, res, next);
  });

  r.post('/sign-out', (req, res, next) => {
    if (!req.user) return res.status(204).end();
    req.logOut((err) => {
      if (err) return next(err);
      req.session.destroy((destroyErr) => {
        if (destroyErr) return next(destroyErr);
        res.clearCookie(o.cookieName);
        res.status(204).end();
      });
    });
  });

  /** Who is signed in, or null: always 200, so the client's first look needs no error. */
  r.get('/session', (req, res) => {
    res.json({ user: req.user ? toSessionUser(req.user) : null });
  });

  r.get('/me', (req, res) => {
    res.json({ user: toSessionUser(member(req)) });
  });

  return r;
}
