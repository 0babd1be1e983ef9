import { z } from 'zod';
import { ROLES } from '../roles';

export const email = z.string().trim().toLowerCase().min(1, 'Enter your e-mail address').max(254, 'At most 254 characters').pipe(z.email('Enter a valid e-mail address'));

export const signInInput = z.strictObject({
  email,
  password: z.string().min(1, 'Enter your password').max(200, 'At most 200 characters'),
});
export type SignInInput = z.infer<typeof signInInput>;

export const role = z.enum(ROLES, { message: `One of: ${ROLES.join(', ')}` });

export const memberRoleInput = z.strictObject({ role });
export type MemberRoleInput = z.infer<typeof memberRoleInput>;

/** What the API says about the signed-in member. */
export interface SessionUser {
  id: number;
  name: string;
  email: string;
  role: (typeof ROLES)[number];
  lab: { id: number; name: string; timeZone: string; dateFormat: string };
}

export interface Member {
  id: number;
  name: string;
  email: string;
  role: (typeof ROLES)[number];
  active: boolean;
  lastSignInAt: string | null;
}

/** The JSON error body every API error uses. */
export interface ApiErrorBody {
  error: { code: string; message: string; fields?: Record<string, string> };
}
