/**
 * E-mail: the local fake SMTP service's captured messages, invitations,
 * password resets (only SHA-256 hashes of their tokens are kept), and the
 * reminder claims that make each morning digest go out exactly once.
 */
import { datetime, index, int, mediumtext, mysqlEnum, mysqlTable, text, uniqueIndex, varchar, char, date } from 'drizzle-orm/mysql-core';
import { ROLES } from '../../../shared/roles';
import { createdAt, labs, pk, ref, users } from './core';

const when = (name: string) => datetime(name, { mode: 'date', fsp: 3 });

/** What the fake SMTP service received (development and tests only; a real SMTP service keeps its own). */
export const mailOutbox = mysqlTable(
  'mail_outbox',
  {
    id: pk(),
    /** From the X-Keepwell-Lab header the app adds when it sends to the fake service. */
    labId: ref('lab_id').references(() => labs.id),
    to: varchar('to_address', { length: 1000 }).notNull(),
    from: varchar('from_address', { length: 300 }).notNull().default(''),
    subject: varchar('subject', { length: 500 }).notNull().default(''),
    text: mediumtext('text'),
    html: mediumtext('html'),
    messageId: varchar('message_id', { length: 300 }),
    rawSize: int('raw_size', { unsigned: true }).notNull(),
    receivedAt: createdAt('received_at'),
  },
  (t) => [index('mail_outbox_lab_idx').on(t.labId, t.receivedAt)],
);

export const invitations = mysqlTable(
  'invitations',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    email: varchar('email', { length: 254 }).notNull(),
    role: mysqlEnum('role', ROLES).notNull(),
    /** SHA-256 of the token in the link, hex. The token itself is never stored. */
    tokenHash: char('token_hash', { length: 64 }).notNull(),
    invitedBy: ref('invited_by').references(() => users.id),
    createdAt: createdAt(),
    expiresAt: when('expires_at').notNull(),
    acceptedAt: when('accepted_at'),
    acceptedUserId: ref('accepted_user_id').references(() => users.id),
    revokedAt: when('revoked_at'),
  },
  (t) => [uniqueIndex('invitations_token_uq').on(t.tokenHash), index('invitations_lab_email_idx').on(t.labId, t.email)],
);

export const passwordResets = mysqlTable(
  'password_resets',
  {
    id: pk(),
    userId: ref('user_id').notNull().references(() => users.id),
    tokenHash: char('token_hash', { length: 64 }).notNull(),
    requestIp: varchar('request_ip', { length: 64 }),
    createdAt: createdAt(),
    expiresAt: when('expires_at').notNull(),
    usedAt: when('used_at'),
  },
  (t) => [uniqueIndex('password_resets_token_uq').on(t.tokenHash), index('password_resets_user_idx').on(t.userId, t.createdAt)],
);

export const REMINDER_STATUSES = ['claimed', 'sent', 'failed', 'skipped'] as const;

/**
 * One row per (member, kind, lab-local date): inserted as a claim before the
 * e-mail is built and sent, so a second instance, an overlapping run or a
 * restart never sends it twice. 'skipped' means the digest was empty.
 */
export const reminders = mysqlTable(
  'reminders',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    userId: ref('user_id').notNull().references(() => users.id),
    kind: varchar('kind', { length: 32 }).notNull(),
    labLocalDate: date('lab_local_date', { mode: 'string' }).notNull(),
    status: mysqlEnum('status', REMINDER_STATUSES).notNull(),
    /** Random per claim: only the holder of the current claim may finish it. */
    claimToken: char('claim_token', { length: 32 }).notNull(),
    attempts: int('attempts', { unsigned: true }).notNull().default(1),
    claimedAt: when('claimed_at').notNull(),
    sentAt: when('sent_at'),
    messageId: varchar('message_id', { length: 300 }),
    lastError: text('last_error'),
  },
  (t) => [uniqueIndex('reminders_once_uq').on(t.userId, t.kind, t.labLocalDate), index('reminders_status_idx').on(t.status, t.labLocalDate)],
);
