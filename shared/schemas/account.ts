/** Invitations, password reset, personal preferences and reminder settings: shared by client and server. */
import { z } from 'zod';
import { text } from './common';
import { isValidTimeZone } from '../compute/schedule';
import { ROLES } from '../roles';
import { email, role } from './auth';

export const PASSWORD_MIN = 10;
/** bcrypt reads at most 72 bytes: a longer password would be silently cut. */
export const PASSWORD_MAX_BYTES = 72;

const utf8Length = (s: string) => new TextEncoder().encode(s).length;

/** At least 10 characters, no composition rules (the server also refuses common passwords). */
export const newPassword = text()
  .min(PASSWORD_MIN, `At least ${PASSWORD_MIN} characters; a few unrelated words make a good one`)
  .max(PASSWORD_MAX_BYTES, `At most ${PASSWORD_MAX_BYTES} characters`)
  .refine((s) => utf8Length(s) <= PASSWORD_MAX_BYTES, `Too long: at most ${PASSWORD_MAX_BYTES} bytes (fewer characters with accents or symbols)`);

export const personName = text().trim().min(1, 'Enter the name your colleagues will see').max(120, 'At most 120 characters');

export const inviteInput = z.strictObject({ email, role });
export type InviteInput = z.infer<typeof inviteInput>;

export const acceptInvitationInput = z.strictObject({ name: personName, password: newPassword });
export type AcceptInvitationInput = z.infer<typeof acceptInvitationInput>;

export const forgotPasswordInput = z.strictObject({ email });
export type ForgotPasswordInput = z.infer<typeof forgotPasswordInput>;

export const resetPasswordInput = z.strictObject({ password: newPassword });
export type ResetPasswordInput = z.infer<typeof resetPasswordInput>;

/** A signed-in member changes their own password: the current one, then the new one (same rules as reset). */
export const changePasswordInput = z
  .strictObject({
    currentPassword: z.string({ message: 'Enter your current password' }).min(1, 'Enter your current password').max(200, 'At most 200 characters'),
    newPassword,
  })
  .refine((d) => d.newPassword !== d.currentPassword, { path: ['newPassword'], message: 'Choose a password different from the current one' });
export type ChangePasswordInput = z.infer<typeof changePasswordInput>;

export const preferencesInput = z.strictObject({ remindersEnabled: z.boolean({ message: 'Choose on or off' }) });
export type PreferencesInput = z.infer<typeof preferencesInput>;

export const timeZone = text()
  .trim()
  .min(1, 'Enter a time zone such as Europe/Berlin')
  .max(64, 'At most 64 characters')
  .refine(isValidTimeZone, 'Not a known time zone: use a name such as Europe/Berlin or America/Chicago')
  // 'europe/berlin' is accepted by the runtime: store it as 'Europe/Berlin'.
  .transform((zone) => {
    const canonical = new Intl.DateTimeFormat('en-US', { timeZone: zone }).resolvedOptions().timeZone;
    return canonical.toLowerCase() === zone.toLowerCase() ? canonical : zone;
  });

/** The lab settings the reminder job reads: the lab's time zone and the hour the digest goes out. */
export const reminderSettingsInput = z.strictObject({
  timeZone,
  reminderHour: z
    .number({ message: 'Enter an hour from 0 to 23' })
    .int('Enter a whole hour from 0 to 23')
    .min(0, 'Enter an hour from 0 to 23')
    .max(23, 'Enter an hour from 0 to 23'),
});
export type ReminderSettingsInput = z.infer<typeof reminderSettingsInput>;

export type InvitationStatus = 'pending' | 'expired';

/** A pending or recently expired invitation, as the Lab page lists it. */
export interface InvitationSummary {
  id: number;
  email: string;
  role: (typeof ROLES)[number];
  status: InvitationStatus;
  invitedBy: string | null;
  createdAt: string;
  expiresAt: string;
}

/** What the public invitation page shows before the person accepts. */
export interface InvitationPreview {
  email: string;
  role: (typeof ROLES)[number];
  labName: string;
  expiresAt: string;
}

/** A message the fake SMTP service captured (development Outbox). */
export interface OutboxMessage {
  id: number;
  to: string;
  from: string;
  subject: string;
  text: string | null;
  html: string | null;
  messageId: string | null;
  rawSize: number;
  receivedAt: string;
}

export interface Preferences {
  remindersEnabled: boolean;
}
