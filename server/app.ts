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
import helmet from 'helmet';
import type { Config } from './config';
import type { Db, Pool } from './db/client';
import { createPassport } from './auth/passport';
import { KeepwellSessionStore } from './auth/session-store';
import { csrfGuard } from './http/csrf';
import { apiNotFound, errorHandler } from './http/errors';
import { SqlRateLimitStore } from './http/rate-limit-store';
import { fileStoreFromConfig, folderStore, type FileStore } from './files';
import type { Logger } from './log';
import { authRoutes } from './routes/auth';
import { healthRoute, labRoutes } from './routes/lab';
import { memberRoutes } from './routes/members';
import { formulaRoutes } from './routes/formulas';
import { storageRoutes } from './routes/storage';
import { studyRoutes } from './routes/studies';
import { studyTemplateRoutes } from './routes/study-templates';
import { recordRoutes } from './routes/records';
import { reviewRoutes } from './routes/reviews';
import { productFileRoutes } from './routes/product-file';
import { photoColourRoutes } from './routes/photo-colour';
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
  /** The file store (photos, chamber-log files); by default from the settings (S3_BUCKET) or uploadsDir. */
  files?: FileStore;
}

const noStore: express.RequestHandler = (_req, res, next) => {
  res.set('Cache-Control', 'no-store');
  next();
};

export function createApp(deps: AppDeps) {
  const { db, pool, config, log } = deps;
  const app = express();
  app.disable('x-powered-by');
  // Every API answer is Cache-Control: no-store, so an ETag (a SHA-1 of each JSON body) is never used;
  // the built client's files keep theirs (express.static sets its own).
  app.set('etag', false);
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

  const idleMs = config.SESSION_IDLE_MINUTES * 60_000;
  // One statement reads the session with its member; the expiry is rewritten at most every few minutes.
  const store = new KeepwellSessionStore(pool, idleMs);

  const passport = createPassport(db, log);
  const files = deps.files ?? (deps.uploadsDir ? folderStore(resolve(deps.uploadsDir)) : fileStoreFromConfig(config));

  const api = express.Router();
  // Before the body parser, the session and passport: the health check needs none of them.
  api.use('/health', noStore, healthRoute(db));
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
  api.use(noStore);
  api.use(csrfGuard(config.PUBLIC_URL ? new URL(config.PUBLIC_URL).origin : undefined));
  api.use(
    '/auth',
    authRoutes({
      passport,
      log,
      cookieName: SESSION_COOKIE,
      ipLimit: deps.signInIpLimit ?? 30,
      ipWindowMs: deps.signInIpWindowMs ?? 15 * 60_000,
      ipStore: new SqlRateLimitStore(pool, 'sign-in'),
      httpsOrigin: config.secureCookies && config.PUBLIC_URL ? new URL(config.PUBLIC_URL).origin : undefined,
    }),
  );
  api.use('/lab', labRoutes(db));
  api.use('/members', memberRoutes(db));
  api.use(formulaRoutes(db));
  api.use(storageRoutes(db, files));
  api.use(studyRoutes(db));
  api.use(studyTemplateRoutes(db));
  api.use(recordRoutes(db, files));
  api.use(reviewRoutes(db, log, files));
  api.use(oosRoutes(db));
  api.use(productFileRoutes(db, files));
  api.use(photoColourRoutes(db, files));
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
