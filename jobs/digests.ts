/**
 * What each member's morning digest says. A stub until the study and
 * checkpoint tables are in place: returning null means "nothing to send",
 * and nobody gets an empty e-mail. Build the content with `renderMail`
 * (server/mail/templates.ts) and links with `ctx.link(path)`.
 */
import type { Db } from '../server/db/client';
import type { MailContent } from '../server/mail/templates';
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

export const buildDigest: BuildDigest = async () => null;
