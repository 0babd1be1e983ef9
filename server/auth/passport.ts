import bcrypt from 'bcryptjs';
import { eq } from 'drizzle-orm';
import type { Request } from 'express';
import { Passport } from 'passport';
import { Strategy as LocalStrategy } from 'passport-local';
import type { Db } from '../db/client';
import { users } from '../db/schema';
import type { HttpError } from '../http/errors';
import type { Logger } from '../log';
import { claimAttempt, LOCKOUT, lockedError, passwordAccepted } from './lockout';
import { BCRYPT_ROUNDS } from './password-policy';
import { loadMember } from './session-user';
import { prefetchedMember, setSessionVersion } from './session-store';

/** A bcrypt hash of a random string: compared when the e-mail is unknown so timing does not tell. */
const DUMMY_HASH = bcrypt.hashSync('keepwell-no-such-user', BCRYPT_ROUNDS);

/** Why a sign-in was refused: the same for a real address and an unknown one. */
export type SignInFailure = HttpError;

export function createPassport(db: Db, log: Logger) {
  const passport = new Passport();

  passport.use(
    new LocalStrategy({ usernameField: 'email', passwordField: 'password', passReqToCallback: true }, (req, email, password, done) => {
      (async () => {
        const now = new Date();
        // Claim the attempt first (atomic per address), then the slow check: parallel guesses cannot outrun the count.
        const claim = await claimAttempt(db, email, now, { reason: `${LOCKOUT.maxFailures} wrong passwords in a row`, ip: req.ip });
        if (!claim.ok) {
          log.warn(`sign-in refused: address locked (ip ${req.ip})`);
          return done(null, false, lockedError(claim.retryAfterSeconds) as never);
        }
        if (claim.locksNow) log.warn(`an address is locked for ${LOCKOUT.minutes} min after ${LOCKOUT.maxFailures} wrong passwords (ip ${req.ip})`);
        const [row] = await db
          .select({ id: users.id, passwordHash: users.passwordHash, active: users.active })
          .from(users)
          .where(eq(users.email, email))
          .limit(1);
        const ok = await bcrypt.compare(password, row?.passwordHash ?? DUMMY_HASH);
        if (!row || !ok || !row.active) return done(null, false);
        await passwordAccepted(db, email, now);
        await db.update(users).set({ lastSignInAt: now }).where(eq(users.id, row.id));
        const memberRow = await loadMember(db, row.id);
        return done(null, memberRow ?? false);
      })().catch(done);
    }),
  );

  // The session keeps the member's id (in its JSON) and the users.version it was issued with (its own column).
  passport.serializeUser((req: Request, user: Express.User, done: (err: unknown, id?: number) => void) => {
    if (req.session) setSessionVersion(req.session, user.id, user.version);
    done(null, user.id);
  });
  // The session store read the member with the session, in the same statement: no second query.
  passport.deserializeUser((req: Request, id: number, done: (err: unknown, user?: Express.User | false) => void) => {
    // Undefined: a stored session without the member's id in its own column (none after migration 0008) is not trusted.
    done(null, prefetchedMember(req, Number(id)) ?? false);
  });
  return passport;
}
