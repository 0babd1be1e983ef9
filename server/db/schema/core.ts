/**
 * Drizzle schema (MariaDB). Every table that holds lab data carries lab_id;
 * repositories always filter on it. Times are DATETIME(3) in UTC.
 * Change this file, then `npm run db:generate` to write a migration.
 */
import { sql } from 'drizzle-orm';
import {
  mysqlTable,
  bigint,
  varchar,
  char,
  text,
  mediumtext,
  int,
  boolean,
  datetime,
  json,
  mysqlEnum,
  decimal,
  uniqueIndex,
  index,
} from 'drizzle-orm/mysql-core';
import { ROLES } from '../../../shared/roles';

/** A creation time set by the server (UTC). */
export const createdAt = (name = 'created_at') => datetime(name, { mode: 'date', fsp: 3 }).notNull().default(sql`CURRENT_TIMESTAMP(3)`);
/** A reference to another table's id. */
export const ref = (name: string) => bigint(name, { mode: 'number', unsigned: true });
/** Auto-increment primary key (BIGINT UNSIGNED). */
export const pk = () => bigint('id', { mode: 'number', unsigned: true }).autoincrement().primaryKey();

export const labs = mysqlTable('labs', {
  id: pk(),
  name: varchar('name', { length: 120 }).notNull(),
  timeZone: varchar('time_zone', { length: 64 }).notNull().default('UTC'),
  q10: decimal('q10', { precision: 4, scale: 2, mode: 'number' }).notNull().default(2),
  reminderHour: int('reminder_hour').notNull().default(7),
  dateFormat: varchar('date_format', { length: 16 }).notNull().default('YYYY-MM-DD'),
  /** When set, an owner may not sign a decision on a study they created or submitted. */
  barSelfApproval: boolean('bar_self_approval').notNull().default(false),
  createdAt: createdAt(),
});

export const users = mysqlTable(
  'users',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    email: varchar('email', { length: 254 }).notNull(),
    name: varchar('name', { length: 120 }).notNull(),
    passwordHash: varchar('password_hash', { length: 100 }).notNull(),
    role: mysqlEnum('role', ROLES).notNull(),
    active: boolean('active').notNull().default(true),
    lastSignInAt: datetime('last_sign_in_at', { mode: 'date', fsp: 3 }),
    /** The member's own choice: the morning reminder digest by e-mail. */
    remindersEnabled: boolean('reminders_enabled').notNull().default(true),
    /**
     * Bumped on a change of role, access (disable) or password: a session carries the version it was
     * issued with and is refused on its next request once they differ (server/auth/session-store.ts).
     */
    version: int('version', { unsigned: true }).notNull().default(1),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('users_email_uq').on(t.email), index('users_lab_idx').on(t.labId)],
);

/**
 * Wrong-password counting per e-mail address (known or not, so the answers never tell which),
 * for sign-in, signing a decision and changing a password (server/auth/lockout.ts).
 * The key is the SHA-256 of the lower-cased address, so unknown addresses are not kept in clear.
 */
export const passwordGuards = mysqlTable('password_guards', {
  keyHash: char('key_hash', { length: 64 }).primaryKey(),
  /** Attempts claimed since the last success or lock; an attempt counts from the moment it starts. */
  failures: int('failures').notNull().default(0),
  lockedUntil: datetime('locked_until', { mode: 'date', fsp: 3 }),
  updatedAt: datetime('updated_at', { mode: 'date', fsp: 3 }).notNull(),
});

/**
 * Append-only audit trail. The app's database account may only INSERT and SELECT
 * here (see server/db/grants.ts).
 */
export const auditLog = mysqlTable(
  'audit_log',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    userId: ref('user_id'),
    at: createdAt('at'),
    action: varchar('action', { length: 32 }).notNull(),
    entity: varchar('entity', { length: 48 }).notNull(),
    entityId: varchar('entity_id', { length: 64 }),
    /** The study a row concerns, when it concerns one (for the audit trail's study filter). */
    studyId: ref('study_id'),
    oldValue: json('old_value'),
    newValue: json('new_value'),
    reason: text('reason'),
  },
  (t) => [index('audit_lab_at_idx').on(t.labId, t.at), index('audit_entity_idx').on(t.labId, t.entity, t.entityId), index('audit_study_idx').on(t.labId, t.studyId, t.at)],
);

/**
 * Sessions (server/auth/session-store.ts; the first three columns are express-mysql-session's layout).
 * user_id and user_version: the signed-in member and the users.version the session was issued with.
 */
export const sessions = mysqlTable(
  'sessions',
  {
    sessionId: varchar('session_id', { length: 128 }).primaryKey(),
    expires: int('expires', { unsigned: true }).notNull(),
    data: mediumtext('data'),
    userId: ref('user_id'),
    userVersion: int('user_version', { unsigned: true }),
  },
  (t) => [index('sessions_user_idx').on(t.userId)],
);
