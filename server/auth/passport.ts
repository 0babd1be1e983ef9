import bcrypt from 'bcryptjs';
import { eq } from 'drizzle-orm';
import { Passport } from 'passport';
import { Strategy as LocalStrategy } from 'passport-local';
import type { Db } from '../db/client';
import { users } from '../db/schema';
import type { HttpError } from '../http/errors';
import type { Logger } from '../log';
import { claimAttempt, LOCKOUT, lockedError, passwordAccepted } from './lockout';
import { BCRYPT_ROUNDS } from './password-policy';
import { loadMember } from './session-user';

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

  passport.serializeUser((user, done) => done(null, user.id));
  passport.deserializeUser((id: number, done) => {
    loadMember(db, Number(id))
      .then((u) => done(null, u ?? false))
      .catch(done);
  });
  return passport;
}
