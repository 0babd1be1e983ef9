/**
 * Sessions in MariaDB, read with the signed-in member in one indexed statement and touched lazily.
 *
 * - get: one prepared statement reads the session row with its member and lab (primary-key lookups).
 *   The member is handed to passport's deserializeUser for this request (see `prefetchedMember`), so
 *   no request loads it twice and nothing is cached across requests.
 * - The session row keeps the users.version it was issued with (user_version). A change of role,
 *   access or password bumps users.version (`bumpMemberVersion`); a session whose copy differs is
 *   refused (signed out) on its next request, on every instance. Routes that mean a session to carry
 *   on (a role change, the member changing their own password) update its copy in the same transaction.
 * - touch: express-session touches the store after every response (rolling cookie); the row's expiry is
 *   only written when it was last written more than TOUCH_INTERVAL_S ago, so reads are not durable writes.
 */
import session from 'express-session';
import type { Request } from 'express';
import type { Pool } from '../db/client';
import type { Role } from '../../shared/roles';

/** The row's expiry is rewritten at most this often (seconds); the idle limit is exact to within it. */
export const TOUCH_INTERVAL_S = 5 * 60;
const CLEAR_EXPIRED_MS = 15 * 60_000;

export const SESSION_GET_SQL =
  'SELECT s.data, s.expires, s.user_id, s.user_version, u.name, u.email, u.role, u.active, u.version, u.lab_id, ' +
  'l.name AS lab_name, l.time_zone, l.date_format ' +
  'FROM sessions s LEFT JOIN users u ON u.id = s.user_id LEFT JOIN labs l ON l.id = u.lab_id WHERE s.session_id = ?';
export const SESSION_SET_SQL =
  'INSERT INTO sessions (session_id, expires, data, user_id, user_version) VALUES (?, ?, ?, ?, ?) ' +
  'ON DUPLICATE KEY UPDATE expires = VALUES(expires), data = VALUES(data), user_id = VALUES(user_id), user_version = VALUES(user_version)';
export const SESSION_TOUCH_SQL = 'UPDATE sessions SET expires = ? WHERE session_id = ?';

/** What get() learned about a stored session, kept beside the Session object (never serialized). */
interface Loaded {
  /** The row's expiry as stored, epoch seconds. */
  expires: number;
  userVersion: number | null;
  /** The member as of this request, or false when the session's member may no longer use it. */
  member: Express.User | false | null;
  userId: number | null;
}

const LOADED = Symbol('keepwell.session.loaded');
type Carrier = { [LOADED]?: Loaded };

interface SessionRow {
  data: string | null;
  expires: number;
  user_id: number | null;
  user_version: number | null;
  name: string | null;
  email: string | null;
  role: Role | null;
  active: number | null;
  version: number | null;
  lab_id: number | null;
  lab_name: string | null;
  time_zone: string | null;
  date_format: string | null;
}

function memberOf(r: SessionRow): Express.User | false | null {
  if (r.user_id == null) return null;
  if (r.version == null || !r.active || r.lab_id == null) return false;
  if (r.user_version !== r.version) return false;
  return {
    id: Number(r.user_id),
    name: r.name!,
    email: r.email!,
    role: r.role!,
    labId: Number(r.lab_id),
    version: r.version,
    lab: { id: Number(r.lab_id), name: r.lab_name!, timeZone: r.time_zone!, dateFormat: r.date_format! },
  };
}

const nowSeconds = () => Math.floor(Date.now() / 1000);

function expiresOf(sess: session.SessionData, fallbackMs: number): number {
  const e = sess.cookie?.expires;
  const ms = e ? new Date(e).getTime() : Date.now() + fallbackMs;
  return Math.round(ms / 1000);
}

function userIdOf(sess: session.SessionData): number | null {
  const u = (sess as { passport?: { user?: unknown } }).passport?.user;
  return typeof u === 'number' || (typeof u === 'string' && /^\d+$/.test(u)) ? Number(u) : null;
}

export class KeepwellSessionStore extends session.Store {
  private timer: NodeJS.Timeout | null = null;

  constructor(
    private readonly pool: Pool,
    /** Idle lifetime, ms (also the expiry of a session saved without a cookie expiry). */
    private readonly expirationMs: number,
  ) {
    super();
    this.timer = setInterval(() => void this.clearExpired().catch(() => {}), CLEAR_EXPIRED_MS);
    this.timer.unref();
  }

  override get(sid: string, cb: (err: unknown, session?: session.SessionData | null) => void): void {
    this.pool
      .execute<import('mysql2').RowDataPacket[]>(SESSION_GET_SQL, [sid])
      .then(([rows]) => {
        const r = rows[0] as SessionRow | undefined;
        if (!r || r.data == null || Number(r.expires) < nowSeconds()) return cb(null, null);
        let data: session.SessionData;
        try {
          data = JSON.parse(r.data) as session.SessionData;
        } catch {
          return cb(null, null);
        }
        const loaded: Loaded = {
          expires: Number(r.expires),
          userVersion: r.user_version == null ? null : Number(r.user_version),
          member: memberOf(r),
          userId: r.user_id == null ? null : Number(r.user_id),
        };
        Object.defineProperty(data, LOADED, { value: loaded, enumerable: false });
        cb(null, data);
      })
      .catch((err) => cb(err));
  }

  /** Keeps what get() read beside the Session object and the request (symbol keys are not copied into the JSON). */
  override createSession(req: Request, data: session.SessionData) {
    const loaded = (data as Carrier)[LOADED];
    const s = super.createSession(req, data);
    if (loaded) {
      Object.defineProperty(s, LOADED, { value: loaded, enumerable: false, writable: true });
      Object.defineProperty(req, LOADED, { value: loaded, enumerable: false, configurable: true });
    }
    return s;
  }

  override set(sid: string, sess: session.SessionData, cb?: (err?: unknown) => void): void {
    const expires = expiresOf(sess, this.expirationMs);
    const userId = userIdOf(sess);
    const loaded = (sess as Carrier)[LOADED];
    const version = userId != null && loaded?.userId === userId ? loaded.userVersion : null;
    this.pool
      .execute(SESSION_SET_SQL, [sid, expires, JSON.stringify(sess), userId, version])
      .then(() => {
        if (loaded) loaded.expires = expires;
        cb?.();
      })
      .catch((err) => cb?.(err));
  }

  /** Rewrites the expiry only when the stored one was written more than TOUCH_INTERVAL_S ago. */
  override touch(sid: string, sess: session.SessionData, cb?: (err?: unknown) => void): void {
    const loaded = (sess as Carrier)[LOADED];
    const expires = expiresOf(sess, this.expirationMs);
    if (loaded && expires - loaded.expires < TOUCH_INTERVAL_S) {
      cb?.();
      return;
    }
    this.pool
      .execute(SESSION_TOUCH_SQL, [expires, sid])
      .then(() => {
        if (loaded) loaded.expires = expires;
        cb?.();
      })
      .catch((err) => cb?.(err));
  }

  override destroy(sid: string, cb?: (err?: unknown) => void): void {
    this.pool
      .execute('DELETE FROM sessions WHERE session_id = ?', [sid])
      .then(() => cb?.())
      .catch((err) => cb?.(err));
  }

  async clearExpired(): Promise<void> {
    await this.pool.execute('DELETE FROM sessions WHERE expires < ?', [nowSeconds()]);
  }

  async close(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
  }
}

/**
 * The member this request's session was read with (by the same statement as the session), for
 * passport's deserializeUser: the member, false when the session may no longer be used (member
 * disabled or removed, or the session predates a change of role, access or password), or undefined
 * when the store did not read one for this user id.
 */
export function prefetchedMember(req: Request, userId: number): Express.User | false | undefined {
  const loaded = (req as unknown as Carrier)[LOADED];
  if (!loaded || loaded.userId !== userId || loaded.member == null) return undefined;
  return loaded.member;
}

/** Records the users.version a session carries (at sign-in, or when a route keeps its own session after a change). */
export function setSessionVersion(sess: session.Session, userId: number, version: number): void {
  const s = sess as unknown as Carrier;
  const loaded = s[LOADED];
  if (loaded) {
    loaded.userId = userId;
    loaded.userVersion = version;
  } else {
    Object.defineProperty(s, LOADED, {
      value: { expires: 0, userVersion: version, member: null, userId } satisfies Loaded,
      enumerable: false,
      writable: true,
    });
  }
}
