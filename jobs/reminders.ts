/**
 * The morning reminder job. Every few minutes (node-cron, never overlapping
 * itself) a tick looks at each lab's local time; once the lab's reminder
 * hour has come, each active member who wants reminders gets the day's digest
 * exactly once:
 *
 *   1. claim: INSERT a row under the UNIQUE key (user, kind, lab-local date).
 *      Whoever inserts it owns it; every other tick, instance or process that
 *      tries the same key finds the row and leaves it alone.
 *   2. build the digest; null means nothing to send (status 'skipped').
 *   3. send, then mark 'sent'. A failure marks 'failed' and logs; the next
 *      tick re-claims the row and tries again (that lab-local day only).
 *
 * A process killed between 1 and 3 leaves a 'claimed' row; once its claim is
 * older than `staleClaimMinutes` a later tick takes it over. A row marked
 * 'sent' is never sent again. (The one gap no database can close: a crash
 * after the SMTP service accepted the message but before the row was marked
 * 'sent' repeats that one message; it then carries the same Message-ID.)
 * No MariaDB named lock (GET_LOCK) is used: a Galera cluster lacks it.
 */
import { randomBytes } from 'node:crypto';
import { and, eq, sql } from 'drizzle-orm';
import cron, { type ScheduledTask } from 'node-cron';
import { pruneGuards } from '../server/auth/lockout';
import { pruneRateLimits } from '../server/http/rate-limit-store';
import { sweepStaleImports } from '../server/services/chamber-logs';
import { isValidTimeZone } from '../shared/compute/schedule';
import type { Config } from '../server/config';
import type { Db } from '../server/db/client';
import { labs, reminders, users } from '../server/db/schema';
import type { Logger } from '../server/log';
import { appUrl, type Mailer } from '../server/mail/mailer';
import { buildDigest as defaultBuildDigest, type BuildDigest, type DigestMember } from './digests';

export const REMINDER_KIND = 'daily_digest';
/** Every five minutes. */
export const REMINDER_CRON = '*/5 * * * *';
export const STALE_CLAIM_MINUTES = 15;
/** Sending attempts per reminder and day before the job gives up on it (and says so in the log). */
export const MAX_ATTEMPTS = 24;

export interface TickOptions {
  db: Db;
  mailer: Mailer;
  log: Logger;
  config: Config;
  /** The clock: tests pass a fixed instant. */
  now: Date;
  buildDigest?: BuildDigest;
  staleClaimMinutes?: number;
}

export interface TickReport {
  /** Members whose lab has reached its reminder hour today. */
  due: number;
  sent: number;
  skipped: number;
  failed: number;
  /** Already handled, or being handled by another run. */
  untouched: number;
}

const hourFormatters = new Map<string, Intl.DateTimeFormat>();

/** The lab-local date ('YYYY-MM-DD') and hour (0-23) at an instant. */
export function labClock(now: Date, timeZone: string): { date: string; hour: number } {
  let f = hourFormatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-US', {
      timeZone,
      calendar: 'gregory',
      numberingSystem: 'latn',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      hourCycle: 'h23',
    });
    hourFormatters.set(timeZone, f);
  }
  const parts = Object.fromEntries(f.formatToParts(now).map((p) => [p.type, p.value]));
  return { date: `${parts.year.padStart(4, '0')}-${parts.month}-${parts.day}`, hour: Number(parts.hour) % 24 };
}

function affected(result: unknown): number {
  const header = Array.isArray(result) ? result[0] : result;
  return Number((header as { affectedRows?: number })?.affectedRows ?? 0);
}

function isDuplicate(err: unknown): boolean {
  const e = err as { errno?: number; cause?: { errno?: number } };
  return e?.errno === 1062 || e?.cause?.errno === 1062;
}

function isDeadlock(err: unknown): boolean {
  const e = err as { errno?: number; cause?: { errno?: number } };
  return e?.errno === 1213 || e?.cause?.errno === 1213;
}

export interface Claim {
  id: number;
  token: string;
  attempts: number;
}

/**
 * Claims one reminder, or returns null when it is sent, skipped, given up on,
 * or freshly claimed by someone else. Exported so tests can leave a claim
 * behind exactly as a killed process would.
 */
export async function claimReminder(
  db: Db,
  m: { userId: number; labId: number },
  kind: string,
  labLocalDate: string,
  now: Date,
  staleClaimMinutes = STALE_CLAIM_MINUTES,
): Promise<Claim | null> {
  const token = randomBytes(16).toString('hex');
  for (let attempt = 1; ; attempt++) {
    try {
      const [{ id }] = await db
        .insert(reminders)
        .values({ labId: m.labId, userId: m.userId, kind, labLocalDate, status: 'claimed', claimToken: token, attempts: 1, claimedAt: now })
        .$returningId();
      return { id, token, attempts: 1 };
    } catch (err) {
      if (isDuplicate(err)) break;
      // On a Galera cluster the same claim inserted on two nodes at once fails certification on one
      // (a deadlock error); trying again then finds the other's row as a duplicate.
      if (!isDeadlock(err) || attempt >= 3) throw err;
      await new Promise((r) => setTimeout(r, 10 * attempt));
    }
  }
  const [row] = await db
    .select()
    .from(reminders)
    .where(and(eq(reminders.userId, m.userId), eq(reminders.kind, kind), eq(reminders.labLocalDate, labLocalDate)));
  if (!row || row.status === 'sent' || row.status === 'skipped') return null;
  if (row.attempts >= MAX_ATTEMPTS) return null;
  const stale = row.claimedAt.getTime() <= now.getTime() - staleClaimMinutes * 60_000;
  if (row.status === 'claimed' && !stale) return null;
  // Take the row over only if nobody else did since we read it.
  const result = await db
    .update(reminders)
    .set({ status: 'claimed', claimToken: token, claimedAt: now, attempts: sql`${reminders.attempts} + 1` })
    .where(and(eq(reminders.id, row.id), eq(reminders.claimToken, row.claimToken), eq(reminders.status, row.status)));
  return affected(result) === 1 ? { id: row.id, token, attempts: row.attempts + 1 } : null;
}

async function finish(db: Db, claim: Claim, set: Partial<typeof reminders.$inferInsert>): Promise<boolean> {
  const result = await db
    .update(reminders)
    .set(set)
    .where(and(eq(reminders.id, claim.id), eq(reminders.claimToken, claim.token)));
  return affected(result) === 1;
}

function domainOf(from: string): string {
  return /@([A-Za-z0-9.-]+)/.exec(from)?.[1] ?? 'keepwell.localhost';
}

/** One run of the job at the instant `now`. Never throws for one member's failure. */
export async function tick(o: TickOptions): Promise<TickReport> {
  const { db, mailer, log, config, now } = o;
  const build = o.buildDigest ?? defaultBuildDigest;
  const stale = o.staleClaimMinutes ?? STALE_CLAIM_MINUTES;
  const report: TickReport = { due: 0, sent: 0, skipped: 0, failed: 0, untouched: 0 };

  const rows = await db
    .select({
      id: users.id,
      name: users.name,
      email: users.email,
      role: users.role,
      labId: users.labId,
      labName: labs.name,
      timeZone: labs.timeZone,
      reminderHour: labs.reminderHour,
    })
    .from(users)
    .innerJoin(labs, eq(labs.id, users.labId))
    .where(and(eq(users.active, true), eq(users.remindersEnabled, true)));

  const badZones = new Set<string>();
  for (const r of rows) {
    if (!isValidTimeZone(r.timeZone)) {
      if (!badZones.has(r.timeZone)) log.warn(`reminders: lab ${r.labId} has an unknown time zone ${JSON.stringify(r.timeZone)}; skipped`);
      badZones.add(r.timeZone);
      continue;
    }
    const clock = labClock(now, r.timeZone);
    if (clock.hour < r.reminderHour) continue;
    report.due++;
    const member: DigestMember = {
      id: r.id,
      name: r.name,
      email: r.email,
      role: r.role,
      labId: r.labId,
      lab: { id: r.labId, name: r.labName, timeZone: r.timeZone, reminderHour: r.reminderHour },
    };
    let claim: Claim | null;
    try {
      claim = await claimReminder(db, { userId: r.id, labId: r.labId }, REMINDER_KIND, clock.date, now, stale);
    } catch (err) {
      log.error(`reminders: could not claim the ${clock.date} digest of member ${r.id}`, err);
      report.failed++;
      continue;
    }
    if (!claim) {
      report.untouched++;
      continue;
    }
    try {
      const content = await build(db, member, clock.date, { link: (path) => appUrl(config, path) });
      if (!content) {
        await finish(db, claim, { status: 'skipped', lastError: null });
        report.skipped++;
        continue;
      }
      const messageId = `<reminder-${claim.id}-${clock.date}@${domainOf(config.MAIL_FROM)}>`;
      await mailer.send({ to: member.email, ...content, labId: member.labId, messageId, autoGenerated: true });
      report.sent++;
      // Sent: recording it must not turn into a 'failed' (which would send it again).
      await finish(db, claim, { status: 'sent', sentAt: now, messageId, lastError: null }).catch((err) =>
        log.error(`reminders: reminder ${claim!.id} was sent but could not be recorded as sent`, err),
      );
    } catch (err) {
      report.failed++;
      const message = err instanceof Error ? err.message : String(err);
      const giveUp = claim.attempts >= MAX_ATTEMPTS;
      log.error(
        `reminders: the ${clock.date} digest of member ${r.id} was not sent (attempt ${claim.attempts}${giveUp ? ', giving up for today' : ', will retry on the next run'})`,
        err,
      );
      await finish(db, claim, { status: 'failed', lastError: message.slice(0, 2000) }).catch((e) =>
        log.error(`reminders: could not record the failure of reminder ${claim.id}`, e),
      );
    }
  }
  return report;
}

export interface ReminderJob {
  /** Runs one tick now (as the schedule would). */
  runOnce(now?: Date): Promise<TickReport>;
  stop(): Promise<void>;
}

/** Schedules the job with node-cron (no overlapping runs in this process). */
export function startReminderJob(o: Omit<TickOptions, 'now'> & { schedule?: string }): ReminderJob {
  let running: Promise<TickReport> | null = null;
  const runOnce = (now = new Date()) => {
    const p = tick({ ...o, now }).finally(() => {
      if (running === p) running = null;
    });
    running = p;
    return p;
  };
  const task: ScheduledTask = cron.createTask(
    o.schedule ?? REMINDER_CRON,
    async () => {
      try {
        // Housekeeping that any instance may do: forget idle wrong-password counts and ended rate-limit
        // windows, and remove chamber-log imports that stopped half-way.
        await pruneGuards(o.db, new Date());
        await pruneRateLimits(o.db);
        await sweepStaleImports(o.db, new Date());
        const r = await runOnce();
        if (r.sent || r.failed) o.log.info(`reminders: ${r.sent} sent, ${r.failed} failed, ${r.skipped} with nothing to say`);
      } catch (err) {
        // E.g. the database is briefly unreachable: the next run tries again; the app stays up.
        o.log.error('reminders: the run failed', err);
      }
    },
    { name: 'keepwell-reminders', noOverlap: true },
  );
  void task.start();
  return {
    runOnce,
    async stop() {
      await task.stop();
      await task.destroy();
      await running?.catch(() => undefined);
    },
  };
}
