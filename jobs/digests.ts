/**
 * What each member's morning digest says; null means "nothing to send", so
 * nobody gets an empty e-mail.
 * - Technicians: the checkpoints of studies they are responsible for that are
 *   overdue, due today or due in the next two days, grouped by storage location,
 *   one line per sample linking to its page.
 * - Formulators: running studies whose checkpoints are all closed and wait to be submitted, and the
 *   out-of-specification results of the studies they own (new since the last digest, or still open).
 * - Owners: studies waiting for their decision.
 */
import { and, eq, notExists, sql } from 'drizzle-orm';
import type { Db } from '../server/db/client';
import { checkpoints, studies } from '../server/db/schema';
import { renderMail, type MailBlock, type MailContent } from '../server/mail/templates';
import { bench } from '../server/services/studies';
import { reviewQueue } from '../server/services/reviews';
import { newInvestigationsFor } from '../server/services/oos';

const OOS_STEP_WORDS = { unconfirmed: 'not yet re-measured or confirmed at the bench', remeasured: 're-measured at the bench', confirmed: 'confirmed at the bench' } as const;
import type { Role } from '../shared/roles';

export interface DigestMember {
  id: number;
  name: string;
  email: string;
  role: Role;
  labId: number;
  lab: { id: number; name: string; timeZone: string; reminderHour: number };
}

export interface DigestContext {
  /** An absolute link into the app (PUBLIC_URL, or http://127.0.0.1:PORT). */
  link(path: string): string;
}

export type BuildDigest = (db: Db, member: DigestMember, labLocalDate: string, ctx: DigestContext) => Promise<MailContent | null>;

const STATE_WORDS = { overdue: 'overdue', due: 'due today', upcoming: 'coming up' } as const;

export const buildDigest: BuildDigest = async (db, member, today, ctx) => {
  const blocks: MailBlock[] = [];
  let count = 0;

  if (member.role === 'technician') {
    // The Bench lists running studies only; `mine`: one of the people responsible (study_responsibles).
    const work = await bench(db, member.labId, today, 2, member.id);
    for (const g of work.groups) {
      const items: { text: string; url?: string; note?: string }[] = [];
      for (const c of g.conditions) {
        for (const cp of c.checkpoints.filter((x) => x.study.mine)) {
          const when = cp.state === 'upcoming' ? `window opens ${cp.windowStart}` : cp.state === 'overdue' ? `window closed ${cp.windowEnd}` : `until ${cp.windowEnd}`;
          for (const s of cp.samples.filter((x) => x.recorded < cp.attributeCount)) {
            items.push({
              text: `${s.code}: ${cp.study.product}, variant ${s.variantCode} (lot ${s.lotCode}), ${c.name}, ${cp.label}`,
              url: ctx.link(`/samples/${s.code}`),
              note: `${STATE_WORDS[cp.state as keyof typeof STATE_WORDS] ?? cp.state}, ${when}`,
            });
            count++;
          }
        }
      }
      if (items.length) blocks.push({ kind: 'list', heading: g.location, items });
    }
    if (!count) return null;
    blocks.unshift({ kind: 'paragraph', text: `Good morning ${member.name.split(' ')[0]}. These samples wait for you, grouped by where they are stored.` });
    blocks.push({ kind: 'button', label: 'Open the Bench', url: ctx.link('/bench') });
  } else {
    if (member.role === 'formulator' || member.role === 'owner') {
      const ready = await db
        .select({ id: studies.id, title: studies.title })
        .from(studies)
        .where(
          and(
            eq(studies.labId, member.labId),
            eq(studies.status, 'running'),
            notExists(db.select({ x: sql`1` }).from(checkpoints).where(and(eq(checkpoints.studyId, studies.id), eq(checkpoints.status, 'open')))),
          ),
        );
      if (ready.length && member.role === 'formulator') {
        blocks.push({
          kind: 'list',
          heading: 'Finished studies to submit for review',
          items: ready.map((s) => ({ text: s.title, url: ctx.link(`/studies/${s.id}`), note: 'every checkpoint is closed' })),
        });
        count += ready.length;
      }
    }
    // Out-of-specification results in the studies they own: new since yesterday's digest, or still open.
    const oos = await newInvestigationsFor(db, member, new Date(Date.now() - 26 * 3_600_000));
    if (oos.length) {
      blocks.push({
        kind: 'list',
        heading: 'Out-of-specification results in your studies',
        items: oos.map((i) => ({
          text: `${i.study.title}: ${i.sampleCode} ${i.condition ?? 'Initial test'} ${i.checkpoint.label}, ${i.attribute.name}`,
          url: ctx.link(`/studies/${i.study.id}?tab=investigations`),
          note: i.status === 'open' ? `investigation open (${OOS_STEP_WORDS[i.benchStep]})` : `closed: ${i.conclusion}`,
        })),
      });
      count += oos.length;
    }
    if (member.role === 'owner') {
      const queue = await reviewQueue(db, member.labId);
      if (queue.length) {
        blocks.push({
          kind: 'list',
          heading: 'Studies waiting for your decision',
          items: queue.map((q) => ({ text: `${q.title} (${q.product})`, url: ctx.link(`/reviews/${q.studyId}`), note: `submitted by ${q.submittedBy} on ${q.submittedAt.slice(0, 10)}` })),
        });
        count += queue.length;
      }
    }
    if (!count) return null;
  }

  const subject = member.role === 'technician' ? `${count} sample check${count === 1 ? '' : 's'} for ${today}` : `${count} stud${count === 1 ? 'y needs' : 'ies need'} you (${today})`;
  return renderMail({
    labName: member.lab.name,
    subject,
    preheader: subject,
    title: member.role === 'technician' ? `Bench work for ${today}` : 'Waiting for you',
    blocks,
    footer: 'You get this because reminders are on for you in Keepwell. Turn them off under your preferences.',
  });
};
