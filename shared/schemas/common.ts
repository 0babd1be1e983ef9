/**
 * The two building blocks every request schema uses for people's input: free text and calendar dates.
 * - `text()`: a string that is valid text. JSON can carry half of a UTF-16 surrogate pair ("\ud800"),
 *   which is not a character: MariaDB refuses it in JSON columns (the audit trail) and replaces it
 *   elsewhere. Control characters other than tab and line breaks are invisible and break exports.
 * - `calendarDate`: YYYY-MM-DD of a day that exists, between 1900-01-01 and 2199-12-31 (outside that,
 *   schedules and stored dates run past what the app and the database handle).
 */
import { z } from 'zod';
import { isValidLocalDate } from '../compute/schedule';

export const NOT_TEXT = 'Contains characters that are not valid text';

/** Half of a surrogate pair (with the u flag a whole pair is one code point and does not match). */
const LONE_SURROGATE = /\p{Cs}/u;
// eslint-disable-next-line no-control-regex
const CONTROL = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F]/;

/** True for text a person could have typed: no lone surrogate halves, no control characters but tab, CR and LF. */
export function isValidText(s: string): boolean {
  return !LONE_SURROGATE.test(s) && !CONTROL.test(s);
}

/**
 * A string of valid text; chain `.trim()`, `.min()`, `.max()`, `.regex()` as on `z.string()`
 * (this check comes first, so its message is the one a field shows). `error` is the message when
 * the value is not a string at all.
 */
export function text(error = 'Enter text') {
  // Not aborting: inside a union (text or number) the string branch then stays the one that answers.
  return z.string({ error }).refine(isValidText, NOT_TEXT);
}

export const MIN_DATE = '1900-01-01';
export const MAX_DATE = '2199-12-31';
export const DATE_RANGE_MESSAGE = `Use a date between ${MIN_DATE} and ${MAX_DATE}`;

const YMD = /^(\d{4})-(\d{2})-(\d{2})$/;

/** True when `s` is YYYY-MM-DD of a day that exists (any year 0000-9999; Gregorian, see shared/compute/schedule.ts). */
export const isRealDate = (s: string): boolean => isValidLocalDate(s);

/** True for a real date within MIN_DATE..MAX_DATE. */
export function isCalendarDate(s: unknown): s is string {
  return typeof s === 'string' && isRealDate(s) && s >= MIN_DATE && s <= MAX_DATE;
}

/** A calendar date as YYYY-MM-DD that exists and lies between 1900-01-01 and 2199-12-31. */
export const calendarDate = z
  .string({ error: 'Enter a date as YYYY-MM-DD' })
  .regex(YMD, { message: 'Enter a date as YYYY-MM-DD', abort: true })
  .refine(isRealDate, { message: 'Not a real date (check the month and the day)', abort: true })
  .refine((s) => s >= MIN_DATE && s <= MAX_DATE, DATE_RANGE_MESSAGE);

/**
 * For a date-time text that starts with a date (a period bound such as "2026-03-25T14:00"): false
 * when its year is outside 1900..2199. Other text is left to the caller's parser.
 */
export function dateTimeInRange(s: string): boolean {
  const m = /^\s*([+-]?\d+)-/.exec(s);
  if (!m) return true;
  if (!/^\d{4}$/.test(m[1])) return false;
  const year = Number(m[1]);
  return year >= Number(MIN_DATE.slice(0, 4)) && year <= Number(MAX_DATE.slice(0, 4));
}
