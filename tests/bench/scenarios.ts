/**
 * The core scenarios: sign-in, one read route as a signed-in owner, and the
 * health check as a baseline. Each raw load repeats, through mysql2, the SQL
 * the route sends (checked against MariaDB's general log with BENCH_TRACE=1).
 */
import { createHash, randomBytes } from 'node:crypto';
import bcrypt from 'bcryptjs';
import { SESSION_GET_SQL, SESSION_SET_SQL } from '../../server/auth/session-store';
import { MEMBER_LIST } from '../../server/routes/members';
import type { BenchContext, Scenario } from './scenario';
import { sessionIdFromCookie } from './scenario';

export const JSON_CHANGE = { 'content-type': 'application/json', 'x-keepwell-request': '1' };
/** The app's session lifetime (SESSION_IDLE_MINUTES default, 120 min): what the store's touch writes. */
const SESSION_IDLE_MS = 120 * 60_000;

/**
 * Every signed-in request: the session with its member and lab, one prepared statement
 * (server/auth/session-store.ts). Its expiry is rewritten at most every few minutes, so a run of
 * seconds writes nothing more.
 */
export const sessionRead = (ctx: BenchContext, sessionId: string) => ctx.pool.execute(SESSION_GET_SQL, [sessionId]);
/** The member loaded at sign-in (loadMember in server/auth/session-user.ts). */
export const MEMBER_WITH_LAB =
  'SELECT u.id, u.name, u.email, u.role, u.lab_id, u.version, l.name AS lab_name, l.time_zone, l.date_format ' +
  'FROM users u INNER JOIN labs l ON l.id = u.lab_id WHERE u.id = ? AND u.active = 1 LIMIT 1';

export function expiresNow(): number {
  return Math.round((Date.now() + SESSION_IDLE_MS) / 1000);
}

export function signInScenario(): Scenario {
  return {
    name: 'sign-in',
    about: 'POST /api/auth/sign-in with valid accounts in rotation (bcrypt cost 10); each writes the user row and a new session',
    request(ctx) {
      const bodies = ctx.data.accounts.map((email) => JSON.stringify({ email, password: ctx.data.password }));
      let next = 0;
      return {
        connections: 10,
        // "Keep": the figure, app 0.89 of bcrypt alone.
        goal: { ratio: 0.89, against: 'bcrypt' },
        note: `10 connections, not 50: bcrypt is CPU-bound, more connections only queue. ${bodies.length} accounts in rotation. Per-IP limiter lifted in the bench server.`,
        requests: [
          {
            method: 'POST',
            path: '/api/auth/sign-in',
            headers: JSON_CHANGE,
            setupRequest: (req) => ({ ...req, body: bodies[next++ % bodies.length] }),
          },
        ],
      };
    },
    raw(ctx) {
      const accounts = accountIds(ctx);
      let hash = '';
      let next = 0;
      return [
        {
          name: 'bcrypt.compare alone (bcryptjs, one thread)',
          once: () => bcrypt.compare(ctx.data.password, (hash ||= bcrypt.hashSync(ctx.data.password, 10))),
        },
        {
          name: 'its SQL alone (11 statements)',
          async once() {
            const a = accounts[next++ % accounts.length];
            // The attempt is claimed in one transaction before the password check (server/auth/lockout.ts), then cleared.
            const key = createHash('sha256').update(a.email).digest('hex');
            const conn = await ctx.pool.getConnection();
            try {
              await conn.query('START TRANSACTION');
              await conn.query('INSERT IGNORE INTO password_guards (key_hash, failures, updated_at) VALUES (?, 0, ?)', [key, new Date()]);
              await conn.query('SELECT * FROM password_guards WHERE key_hash = ? FOR UPDATE', [key]);
              await conn.query('UPDATE password_guards SET failures = 1, locked_until = NULL, updated_at = ? WHERE key_hash = ?', [new Date(), key]);
              await conn.query('COMMIT');
            } finally {
              conn.release();
            }
            await ctx.pool.query('SELECT id, password_hash, active FROM users WHERE email = ? LIMIT 1', [a.email]);
            await ctx.pool.query('UPDATE password_guards SET failures = 0, locked_until = NULL, updated_at = ? WHERE key_hash = ?', [new Date(), key]);
            await ctx.pool.query('UPDATE users SET last_sign_in_at = ? WHERE id = ?', [new Date(), a.id]);
            await ctx.pool.query(MEMBER_WITH_LAB, [a.id]);
            // passport regenerates the session: the store destroys the old id, then saves the new one.
            await ctx.pool.query('DELETE FROM sessions WHERE session_id = ?', [randomBytes(24).toString('base64url')]);
            const sid = randomBytes(24).toString('base64url');
            const expires = expiresNow();
            const data = JSON.stringify({
              cookie: { originalMaxAge: SESSION_IDLE_MS, expires: new Date(expires * 1000).toISOString(), httpOnly: true, path: '/', sameSite: 'lax' },
              passport: { user: a.id },
            });
            // Saved twice, as the app does: by passport's logIn, then again by express-session at the
            // end of the response (the id changed, so it does not count as saved).
            for (let i = 0; i < 2; i++) await ctx.pool.execute(SESSION_SET_SQL, [sid, expires, data, a.id, 1]);
          },
        },
      ];
    },
  };
}

function accountIds(ctx: BenchContext): { email: string; id: number }[] {
  const ids = new Map<string, number>();
  for (const lab of ctx.data.demo) for (const [email, id] of Object.entries(lab.members)) ids.set(email, id);
  for (const lab of ctx.data.labs) for (const m of lab.members) ids.set(m.email, m.id);
  return ctx.data.accounts.map((email) => ({ email, id: ids.get(email)! }));
}

export function membersScenario(): Scenario {
  /** One signed-in owner per connection, each of a different 12-member lab: 50 people at once, not one person 50 times. */
  let owners: { cookie: string; sessionId: string; userId: number; labId: number }[] = [];
  return {
    name: 'members',
    about: 'GET /api/members as owners of 12-member labs, one owner and session per connection (session and member in one statement, then the list)',
    async setup(ctx) {
      owners = [];
      for (const lab of ctx.data.labs) {
        const cookie = await ctx.signIn(lab.owner);
        owners.push({ cookie, sessionId: sessionIdFromCookie(cookie), userId: lab.members[0].id, labId: lab.id });
      }
      const lab = ctx.data.labs[0];
      const res = await fetch(`${ctx.baseUrl}/api/members`, { headers: { cookie: owners[0].cookie } });
      const body = (await res.json()) as { members?: unknown[] };
      if (res.status !== 200 || body.members?.length !== lab.members.length) {
        throw new Error(`GET /api/members answered ${res.status} with ${body.members?.length} members, expected 200 with ${lab.members.length}`);
      }
    },
    request() {
      let nextConnection = 0;
      return {
        goal: { ratio: 0.5 },
        note: `${owners.length} owners signed in, connection i sends owner i's session cookie.`,
        requests: [
          {
            method: 'GET',
            path: '/api/members',
            setupRequest(req, context) {
              context.owner ??= nextConnection++ % owners.length;
              return { ...req, headers: { ...req.headers, cookie: owners[context.owner as number].cookie } };
            },
          },
        ],
      };
    },
    raw: (ctx) => [
      { name: "the route's main query alone", once: (loop) => ctx.pool.execute(MEMBER_LIST, [owners[loop % owners.length].labId]) },
      {
        name: 'both statements a request makes',
        async once(loop) {
          const o = owners[loop % owners.length];
          await sessionRead(ctx, o.sessionId);
          await ctx.pool.execute(MEMBER_LIST, [o.labId]);
        },
      },
    ],
  };
}

export function healthScenario(): Scenario {
  return {
    name: 'health',
    about: 'GET /api/health: Express, helmet and one SELECT 1, no session (baseline)',
    request: () => ({ path: '/api/health', goal: { ratio: 0.25 } }),
    raw: (ctx) => [{ name: 'SELECT 1', once: () => ctx.pool.query('SELECT 1') }],
  };
}

export const coreScenarios = (): Scenario[] => [signInScenario(), membersScenario(), healthScenario()];
