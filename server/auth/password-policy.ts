/**
 * Password rules (NIST SP 800-63B, section 5.1.1.2, from memory): at least
 * 10 characters, no composition rules, and refused when on a list of common
 * or breached passwords or when it repeats the account's own e-mail. The
 * length rules live in the shared zod schema; the list check runs here.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/**
 * bcrypt cost for every stored password, and for the stand-in hash compared when an address is unknown.
 * Under vitest only (VITEST is set by it, with NODE_ENV=test) the cost is 4: the suite signs in a few
 * hundred times and a cost of 10 took about 110 ms of CPU each; what is tested (which password is
 * accepted, the same work for a real and an unknown address) does not depend on the cost.
 */
export const BCRYPT_ROUNDS = process.env.VITEST && process.env.NODE_ENV === 'test' ? 4 : 10;

const SHIPPED = fileURLToPath(new URL('./common-passwords.txt', import.meta.url));
/** A widely used list (zxcvbn's, about 49,000 entries), used when the package is installed. */
const LIST_PACKAGE = '@zxcvbn-ts/language-common';

let loaded: Promise<Set<string>> | null = null;

async function loadList(): Promise<Set<string>> {
  const set = new Set<string>();
  for (const line of readFileSync(SHIPPED, 'utf8').split('\n')) {
    const p = line.trim();
    if (p && !p.startsWith('#')) set.add(p.toLowerCase());
  }
  try {
    // A variable specifier: the package is optional until it is added to package.json.
    const spec: string = LIST_PACKAGE;
    const mod = (await import(spec)) as { dictionary?: Record<string, unknown> };
    const words = mod.dictionary?.['passwords-common'];
    if (Array.isArray(words)) for (const w of words) if (typeof w === 'string') set.add(w.toLowerCase());
  } catch {
    // Not installed: the shipped list alone.
  }
  return set;
}

export function commonPasswords(): Promise<Set<string>> {
  loaded ??= loadList();
  return loaded;
}

/** Why a password is refused, or null when it is acceptable. Length is checked by the shared schema. */
export async function passwordProblem(password: string, context: { email?: string } = {}): Promise<string | null> {
  const lower = password.toLowerCase();
  if ((await commonPasswords()).has(lower)) return 'This password is on a list of common passwords: choose a less obvious one';
  if (/^(.)\1+$/.test(password)) return 'Choose a password that is not one character repeated';
  const email = context.email?.toLowerCase();
  if (email && (lower === email || lower === email.split('@')[0])) return 'Choose a password that is not your e-mail address';
  return null;
}
