/**
 * Builds the Express app: security headers, JSON parsing, sessions in MariaDB,
 * passport, the API routers, the built client, and one error handler.
 * Holds no state of its own, so any number of instances can run side by side.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { join, resolve } from 'node:path';
import express from 'express';
import session from 'express-session';
import MySQLStoreFactory from 'express-mysql-session';
import helmet from 'helmet';
import type { Config } from './config';
import type { Db, Pool } from './db/client';
import { createPassport } from './auth/passport';
import { csrfGuard } from './http/csrf';
import { apiNotFound, errorHandler } from './http/errors';
import type { Logger } from './log';
import { authRoutes } from './routes/auth';
import { healthRoute, labRoutes } from './routes/lab';
import { memberRoutes } from './routes/members';
import { formulaRoutes } from './routes/formulas';
import { storageRoutes } from './routes/storage';
import { studyRoutes } from './routes/studies';
import { recordRoutes } from './routes/records';
import { reviewRoutes } from './routes/reviews';
import { accountRoutes } from './routes/account';
import { oosRoutes } from './routes/oos';

export const SESSION_COOKIE = 'kw.sid';
const DIST = fileURLToPath(new URL('../dist', import.meta.url));

export interface AppDeps {
  db: Db;
  pool: Pool;
  config: Config;
  log: Logger;
  sessionSecret: string;
  /** Sign-in attempts per IP per window (tests lower it). */
  signInIpLimit?: number;
  signInIpWindowMs?: number;
  serveClient?: boolean;
  /** Where photos are stored (outside the web root); defaults to DATA_DIR/uploads. */
  uploadsDir?: string;
}

export function createApp(deps: AppDeps) {
  const { db, pool, config, log } = deps;
  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', config.TRUST_PROXY);

  app.use(
    helmet({
      contentSecurityPolicy: {
        useDefaults: false,
        directives: {
          'default-src': ["'self'"],
          'script-src': ["'self'"],
          'style-src': ["'self'", "'unsafe-inline'"],
          'img-src': ["'self'", 'data:', 'blob:'],
          'font-src': ["'self'"],
          'connect-src': ["'self'"],
          'object-src': ["'none'"],
          'base-uri': ["'none'"],
          'frame-ancestors': ["'none'"],
          'form-action': ["'self'"],
          ...(config.secureCookies ? { 'upgrade-insecure-requests': [] } : {}),
        },
      },
      strictTransportSecurity: config.secureCookies,
      // DENY agrees with frame-ancestors 'none' (helmet's default SAMEORIGIN would contradict it).
      xFrameOptions: { action: 'deny' },
    }),
  );

  const MySQLStore = MySQLStoreFactory(session);
  const idleMs = config.SESSION_IDLE_MINUTES * 60_000;
  const store = new MySQLStore(
    {
      createDatabaseTable: false,
      endConnectionOnClose: false,
      clearExpired: true,
      checkExpirationInterval: 15 * 60_000,
      expiration: idleMs,
    },
    pool,
  );

  const passport = createPassport(db, log);

  const api = express.Router();
  api.use(express.json({ limit: '256kb', strict: true }));
  api.use(
    session({
      name: SESSION_COOKIE,
      secret: deps.sessionSecret,
      store,
      resave: false,
      saveUninitialized: false,
      rolling: true,
      cookie: { httpOnly: true, sameSite: 'lax', secure: config.secureCookies, maxAge: idleMs },
    }),
  );
  api.use(passport.initialize());
  api.use(passport.session());
  api.use((_req, res, next) => {
    res.set('Cache-Control', 'no-store');
    next();
  });
  api.use('/health', healthRoute(db));
  api.use(csrfGuard(config.PUBLIC_URL ? new URL(config.PUBLIC_URL).origin : undefined));
  api.use(
    '/auth',
    authRoutes({
      passport,
      log,
      cookieName: SESSION_COOKIE,
      ipLimit: deps.signInIpLimit ?? 30,
      ipWindowMs: deps.signInIpWindowMs ?? 15 * 60_000,
      httpsOrigin: config.secureCookies && config.PUBLIC_URL ? new URL(config.PUBLIC_URL).origin : undefined,
    }),
  );
  api.use('/lab', labRoutes(db));
  api.use('/members', memberRoutes(db));
  api.use(formulaRoutes(db));
  api.use(storageRoutes(db));
  api.use(studyRoutes(db));
  // Absolute: res.sendFile refuses relative paths, and DATA_DIR defaults to the relative '.data'.
  const uploadsDir = resolve(deps.uploadsDir ?? join(config.DATA_DIR, 'uploads'));
  api.use(recordRoutes(db, uploadsDir));
  api.use(reviewRoutes(db, log, uploadsDir));
  api.use(oosRoutes(db));
  api.use(accountRoutes({ db, config, log }));
  api.use(apiNotFound);
  app.use('/api', api);

  if (deps.serveClient !== false && existsSync(join(DIST, 'index.html'))) {
    app.use(express.static(DIST, { index: false, maxAge: '1h' }));
    app.get('/{*splat}', (_req, res) => res.sendFile(join(DIST, 'index.html')));
  }

  app.use(errorHandler((msg, err) => log.error(msg, err)));

  return {
    app,
    /** Stops the session store's timer; the pool is closed by the caller. */
    async close() {
      await store.close();
    },
  };
}
