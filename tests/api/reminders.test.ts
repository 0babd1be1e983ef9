/**
 * The reminder job's delivery guarantees, with a fake clock (each tick gets
 * its `now`; nothing waits for real cron timing) and real MariaDB + SMTP:
 * once per member and lab-local day, also with overlapping runs, a run
 * killed mid-way and an SMTP service that is down.
 */
import { createServer } from 'node:net';
import { and, eq, like } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { claimReminder, labClock, REMINDER_KIND, startReminderJob, STALE_CLAIM_MINUTES, tick, type TickOptions } from '../../jobs/reminders';
import type { BuildDigest } from '../../jobs/digests';
import { loadConfig } from '../../server/config';
import { labs, mailOutbox, reminders, users } from '../../server/db/schema';
import type { Logger } from '../../server/log';
import { closeMailerFor, createMailer, mailerFor, type Mailer } from '../../server/mail/mailer';
import { renderMail } from '../../server/mail/templates';
import { createTestApp, DEMO, type TestApp } from '../helpers/app';

let t: TestApp;
let mailer: Mailer;
const config = loadConfig({ NODE_ENV: 'test' });
const logged: string[] = [];
const log: Logger = {
  info: (m) => logged.push(`info ${m}`),
  warn: (m) => logged.push(`warn ${m}`),
  error: (m) => logged.push(`error ${m}`),
};

const LARKSPUR = [DEMO.owner, DEMO.formulator, DEMO.technician];

/** A digest with something in it for everyone (the real content comes from jobs/digests.ts). */
const someDigest: BuildDigest = async (_db, member, date, ctx) =>
  renderMail({
    labName: member.lab.name,
    subject: `Due today at ${member.lab.name} (${date})`,
    title: `Good morning, ${member.name}`,
    blocks: [{ kind: 'list', heading: 'Oven 2 (40 °C)', items: [{ text: 'LS-0042 Week 4', url: ctx.link('/samples/LS-0042'), note: 'due today' }] }],
    footer: 'You receive this because reminders are on for you.',
  });

const nothing: BuildDigest = async () => null;

function opts(now: string, extra: Partial<TickOptions> = {}): TickOptions {
  return { db: t.db, mailer, log, config, now: new Date(now), buildDigest: someDigest, ...extra };
}

/** Digest e-mails captured for one lab-local date, by recipient. */
async function digestsOn(date: string): Promise<Record<string, number>> {
  const rows = await t.db.select({ to: mailOutbox.to }).from(mailOutbox).where(like(mailOutbox.messageId, `<reminder-%-${date}@%`));
  const out: Record<string, number> = {};
  for (const r of rows) out[r.to] = (out[r.to] ?? 0) + 1;
  return out;
}

const onceEach = (addresses: readonly string[]) => Object.fromEntries(addresses.map((a) => [a, 1]));
const larkspurOnly = (counts: Record<string, number>) =>
  Object.fromEntries(Object.entries(counts).filter(([to]) => to.endsWith('@larkspur.example')));

async function closedPort(): Promise<number> {
  return new Promise((resolve) => {
    const s = createServer();
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

beforeAll(async () => {
  t = await createTestApp();
  mailer = mailerFor({ db: t.db, config, log });
});
afterAll(async () => {
  await closeMailerFor(t.db);
  await t?.close();
});

describe('lab clock', () => {
  it('reads the lab-local date and hour in the lab time zone, across daylight saving', () => {
    // Europe/Berlin is UTC+1 in winter and UTC+2 in summer (EU summer time, from memory).
    expect(labClock(new Date('2027-01-04T05:59:00Z'), 'Europe/Berlin')).toEqual({ date: '2027-01-04', hour: 6 });
    expect(labClock(new Date('2027-07-04T05:00:00Z'), 'Europe/Berlin')).toEqual({ date: '2027-07-04', hour: 7 });
    // America/Chicago is UTC-6 in winter: 03:00 UTC is still the day before, 21:00.
    expect(labClock(new Date('2027-01-04T03:00:00Z'), 'America/Chicago')).toEqual({ date: '2027-01-03', hour: 21 });
    expect(labClock(new Date('2027-01-04T00:30:00Z'), 'Asia/Kolkata')).toEqual({ date: '2027-01-04', hour: 6 });
  });
});

describe('the reminder job', () => {
  it('sends nothing before the lab reminder hour, then one digest per member, and never again that day', async () => {
    // 06:30 in Berlin: not yet.
    await tick(opts('2027-01-04T05:30:00Z'));
    expect(larkspurOnly(await digestsOn('2027-01-04'))).toEqual({});
    // 07:00 in Berlin.
    await tick(opts('2027-01-04T06:00:00Z'));
    expect(larkspurOnly(await digestsOn('2027-01-04'))).toEqual(onceEach(LARKSPUR));
    await tick(opts('2027-01-04T06:05:00Z'));
    await tick(opts('2027-01-04T15:00:00Z'));
    expect(larkspurOnly(await digestsOn('2027-01-04'))).toEqual(onceEach(LARKSPUR));
    const [m] = await t.db.select().from(mailOutbox).where(and(eq(mailOutbox.to, DEMO.technician), like(mailOutbox.messageId, '%-2027-01-04@%')));
    expect(m.subject).toBe('Due today at Larkspur Skin Studio (2027-01-04)');
    expect(m.text).toContain('http://127.0.0.1:3000/samples/LS-0042');
    expect(m.labId).toBe(t.labs[0].id);
    // The next lab-local day is a new digest.
    await tick(opts('2027-01-05T06:00:00Z', { buildDigest: nothing }));
    expect(larkspurOnly(await digestsOn('2027-01-05'))).toEqual({});
  });

  it('follows each lab\'s own time zone and hour', async () => {
    await t.db.update(labs).set({ reminderHour: 9 }).where(eq(labs.id, t.labs[1].id));
    // 08:00 in Chicago (UTC-6): not yet for Copperbeech.
    await tick(opts('2027-01-10T14:00:00Z'));
    expect(await digestsOn('2027-01-10')).toEqual(onceEach(LARKSPUR));
    // 09:00 in Chicago.
    await tick(opts('2027-01-10T15:00:00Z'));
    expect(await digestsOn('2027-01-10')).toEqual(onceEach([...LARKSPUR, DEMO.otherOwner, DEMO.otherTechnician]));
    await t.db.update(labs).set({ reminderHour: 7 }).where(eq(labs.id, t.labs[1].id));
  });

  it('two runs at once deliver each reminder exactly once', async () => {
    const second = createMailer({ db: t.db, config, log });
    const reports = await Promise.all([
      tick(opts('2027-01-11T06:00:00Z')),
      tick(opts('2027-01-11T06:00:00Z', { mailer: second })),
      tick(opts('2027-01-11T06:00:01Z')),
    ]);
    expect(larkspurOnly(await digestsOn('2027-01-11'))).toEqual(onceEach(LARKSPUR));
    const sent = reports.reduce((n, r) => n + r.sent, 0);
    expect(sent).toBe(Object.values(await digestsOn('2027-01-11')).reduce((a, b) => a + b, 0));
    const rows = await t.db.select().from(reminders).where(eq(reminders.labLocalDate, '2027-01-11'));
    expect(rows.every((r) => r.status === 'sent' && r.attempts === 1)).toBe(true);
    await second.close();
  });

  it('a run killed after claiming is taken over once its claim is stale, and delivers once', async () => {
    const techId = t.labs[0].members[DEMO.technician];
    // A process claimed the technician's digest at 07:00 and died before sending.
    const claim = await claimReminder(t.db, { userId: techId, labId: t.labs[0].id }, REMINDER_KIND, '2027-01-12', new Date('2027-01-12T06:00:00Z'));
    expect(claim).not.toBeNull();

    await tick(opts('2027-01-12T06:05:00Z'));
    // The others are served; the technician's claim is still fresh, so it is left alone.
    expect(larkspurOnly(await digestsOn('2027-01-12'))).toEqual(onceEach([DEMO.owner, DEMO.formulator]));

    const later = new Date(Date.parse('2027-01-12T06:00:00Z') + (STALE_CLAIM_MINUTES + 1) * 60_000).toISOString();
    await Promise.all([tick(opts(later)), tick(opts(later))]);
    await tick(opts('2027-01-12T09:00:00Z'));
    expect(larkspurOnly(await digestsOn('2027-01-12'))).toEqual(onceEach(LARKSPUR));
    const [row] = await t.db.select().from(reminders).where(and(eq(reminders.userId, techId), eq(reminders.labLocalDate, '2027-01-12')));
    expect(row).toMatchObject({ status: 'sent', attempts: 2 });
  });

  it('SMTP unreachable: marked failed and logged, the app stays up, and the next run delivers once', async () => {
    const down = createMailer({ db: t.db, config, log, smtp: { host: '127.0.0.1', port: await closedPort(), secure: false } });
    logged.length = 0;
    const report = await tick(opts('2027-01-13T06:00:00Z', { mailer: down }));
    expect(report.failed).toBeGreaterThanOrEqual(3);
    expect(report.sent).toBe(0);
    expect(larkspurOnly(await digestsOn('2027-01-13'))).toEqual({});
    const failed = await t.db.select().from(reminders).where(eq(reminders.labLocalDate, '2027-01-13'));
    expect(failed.every((r) => r.status === 'failed' && /ECONNREFUSED/.test(r.lastError ?? ''))).toBe(true);
    expect(logged.some((l) => l.startsWith('error') && l.includes('will retry on the next run'))).toBe(true);
    expect((await t.client().get('/api/health')).status).toBe(200);

    await tick(opts('2027-01-13T06:05:00Z'));
    await tick(opts('2027-01-13T06:10:00Z'));
    expect(larkspurOnly(await digestsOn('2027-01-13'))).toEqual(onceEach(LARKSPUR));
    const rows = await t.db.select().from(reminders).where(eq(reminders.labLocalDate, '2027-01-13'));
    expect(rows.every((r) => r.status === 'sent' && r.attempts === 2 && r.lastError === null)).toBe(true);
    await down.close();
  });

  it('sends no e-mail when the digest is empty, and decides that once a day', async () => {
    const report = await tick(opts('2027-01-14T06:00:00Z', { buildDigest: nothing }));
    expect(report.sent).toBe(0);
    expect(report.skipped).toBeGreaterThanOrEqual(3);
    await tick(opts('2027-01-14T10:00:00Z'));
    expect(await digestsOn('2027-01-14')).toEqual({});
  });

  it('skips members who turned reminders off, disabled members, and labs with a broken time zone', async () => {
    const tech = await t.signIn(DEMO.technician);
    await tech.patch('/api/me/preferences', { remindersEnabled: false });
    await t.db.update(users).set({ active: false }).where(eq(users.email, DEMO.formulator));
    await t.db.update(labs).set({ timeZone: 'Mars/Olympus_Mons' }).where(eq(labs.id, t.labs[1].id));
    logged.length = 0;
    await tick(opts('2027-01-15T18:00:00Z'));
    expect(await digestsOn('2027-01-15')).toEqual(onceEach([DEMO.owner]));
    expect(logged.some((l) => l.startsWith('warn') && l.includes('Mars/Olympus_Mons'))).toBe(true);
    await tech.patch('/api/me/preferences', { remindersEnabled: true });
    await t.db.update(users).set({ active: true }).where(eq(users.email, DEMO.formulator));
    await t.db.update(labs).set({ timeZone: 'America/Chicago' }).where(eq(labs.id, t.labs[1].id));
  });

  it('runs under node-cron in-process and stops cleanly', async () => {
    const job = startReminderJob({ db: t.db, mailer, log, config, buildDigest: nothing });
    const r = await job.runOnce(new Date('2027-01-16T06:00:00Z'));
    expect(r.due).toBeGreaterThanOrEqual(3);
    await job.stop();
  });
});

describe('lab reminder settings', () => {
  it('refuse a time zone that is not a valid IANA zone, and an hour outside 0-23', async () => {
    const owner = await t.signIn(DEMO.owner);
    const bad = await owner.patch('/api/lab/reminder-settings', { timeZone: 'Mars/Olympus_Mons', reminderHour: 7 });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.timeZone).toMatch(/Not a known time zone/);
    const hour = await owner.patch('/api/lab/reminder-settings', { timeZone: 'Europe/Berlin', reminderHour: 24 });
    expect(hour.body.error.fields.reminderHour).toBeTruthy();
    const offset = await owner.patch('/api/lab/reminder-settings', { timeZone: '+02:00 ', reminderHour: 7 });
    expect(offset.status).toBe(400);
    const [before] = await t.db.select().from(labs).where(eq(labs.id, t.labs[0].id));
    expect(before.timeZone).toBe('Europe/Berlin');

    const ok = await owner.patch('/api/lab/reminder-settings', { timeZone: 'Europe/Lisbon', reminderHour: 6 });
    expect(ok.status).toBe(200);
    const [after] = await t.db.select().from(labs).where(eq(labs.id, t.labs[0].id));
    expect(after).toMatchObject({ timeZone: 'Europe/Lisbon', reminderHour: 6 });
    const tech = await t.signIn(DEMO.technician);
    expect((await tech.patch('/api/lab/reminder-settings', { timeZone: 'UTC', reminderHour: 6 })).status).toBe(403);
    await owner.patch('/api/lab/reminder-settings', { timeZone: 'Europe/Berlin', reminderHour: 7 });
  });
});
