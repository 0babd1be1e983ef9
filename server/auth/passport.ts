import bcrypt from 'bcryptjs';
import { eq } from 'drizzle-orm';
import { Passport } from 'passport';
import { Strategy as LocalStrategy } from 'passport-local';
import type { Db } from '../db/client';
import { users } from '../db/schema';
import type { Logger } from '../log';
import { countWrongPassword, LOCKOUT } from './lockout';
import { loadMember } from './session-user';


/** A bcrypt hash of a random string: compared when the e-mail is unknown so timing does not tell. */
const DUMMY_HASH = bcrypt.hashSync('keepwell-no-such-user', 10);

export interface SignInFailure {
  status: 401 | 429;
  message: string;
  retryAfterSeconds?: number;
}

export function createPassport(db: Db, log: Logger) {
  const passport = new Passport();

  passport.use(
    new LocalStrategy({ usernameField: 'email', passwordField: 'password', passReqToCallback: true }, (req, email, password, done) => {
      (async () => {
        const [row] = await db.select().from(users).where(eq(users.email, email)).limit(1);
        const now = new Date();
        if (row?.lockedUntil && row.lockedUntil > now) {
          const retryAfterSeconds = Math.ceil((row.lockedUntil.getTime() - now.getTime()) / 1000);
          log.warn(`sign-in refused: account ${row.id} locked (ip ${req.ip})`);
          return done(null, false, {
            status: 429,
            message: `Too many failed sign-ins for this account; try again in ${Math.ceil(retryAfterSeconds / 60)} min`,
            retryAfterSeconds,
          } satisfies SignInFailure as never);
        }
        const ok = await bcrypt.compare(password, row?.passwordHash ?? DUMMY_HASH);
        if (!row || !ok || !row.active) {
          if (row) {
            const lock = await countWrongPassword(db, row, now, { lockAudit: { reason: `${LOCKOUT.maxFailures} failed sign-ins`, ip: req.ip } });
            if (lock) log.warn(`account ${row.id} locked for ${LOCKOUT.minutes} min after ${LOCKOUT.maxFailures} failed sign-ins (ip ${req.ip})`);
          }
          return done(null, false, { status: 401, message: 'E-mail or password is wrong' } satisfies SignInFailure as never);
        }
        await db.update(users).set({ failedSignIns: 0, lockedUntil: null, lastSignInAt: now }).where(eq(users.id, row.id));
        const memberRow = await loadMember(db, row.id);
        return done(null, memberRow ?? false);
      })().catch(done);
    }),
  );

  passport.serializeUser((user, done) => done(null, user.id));
  passport.deserializeUser((id: number, done) => {
    loadMember(db, Number(id))
      .then((u) => done(null, u ?? false))
      .catch(done);
  });
  return passport;
}
