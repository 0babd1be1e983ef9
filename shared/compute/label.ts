/**
 * Label dating for cosmetics under EU Regulation (EC) No 1223/2009, Art. 19(1)(c)
 * (wording recalled from memory, not copied from the Official Journal):
 *   the date of minimum durability must be shown, preceded by the hourglass
 *   symbol (Annex VII, point 3) or the words "best used before the end of";
 *   it is not mandatory for products whose minimum durability exceeds 30 months,
 *   which instead show the period after opening for which the product is safe
 *   and can be used without harm (open-jar symbol, Annex VII, point 2, followed
 *   by the period in months and/or years), except where durability after
 *   opening is not relevant.
 *
 * Pure functions: no I/O, no clock. Dates are calendar dates 'YYYY-MM-DD'.
 */

export const EU_BEST_BEFORE_THRESHOLD_MONTHS = 30;

export const US_NOTE =
  'In the US no expiry date is required for ordinary cosmetics; MoCRA (2022) requires records substantiating safety.';

export interface LabelDatingInput {
  /** Shelf life (minimum durability) in whole months. */
  shelfLifeMonths: number;
  /** Date the batch was made, 'YYYY-MM-DD'; when omitted no best-before date is computed. */
  madeDate?: string | null;
  /** Period after opening in whole months, where the lab has set one. */
  periodAfterOpeningMonths?: number | null;
}

export interface LabelDating {
  /** Which rule applies; null when the input is invalid (see `text`). */
  rule: 'best_before' | 'period_after_opening' | null;
  /** Made date + shelf life, 'YYYY-MM-DD' (calendar months, clamped to the month end); null when not applicable. */
  bestBefore: string | null;
  periodAfterOpeningMonths: number | null;
  /** What the label needs, naming Art. 19(1)(c) and deferring to the lab's regulatory adviser. */
  text: string;
  usNote: string;
}

export interface YMD {
  y: number;
  m: number;
  d: number;
}

function daysInMonth(y: number, m: number): number {
  // m is 1-12; day 0 of the next month is the last day of this one.
  return new Date(Date.UTC(y, m, 0)).getUTCDate();
}

/** Parse a real calendar date 'YYYY-MM-DD', or null. */
export function parseIsoDate(s: string): YMD | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(s);
  if (!m) return null;
  const y = Number(m[1]);
  const mo = Number(m[2]);
  const d = Number(m[3]);
  if (mo < 1 || mo > 12 || d < 1 || d > daysInMonth(y, mo)) return null;
  return { y, m: mo, d };
}

const pad = (n: number, w = 2): string => String(n).padStart(w, '0');

/**
 * Add whole calendar months to a 'YYYY-MM-DD' date; a day that does not exist in
 * the target month is clamped to its last day (2024-01-31 + 1 month = 2024-02-29).
 * Null for an invalid date or a non-integer month count.
 */
export function addCalendarMonths(date: string, months: number): string | null {
  const p = parseIsoDate(date);
  if (!p || !Number.isInteger(months)) return null;
  const total = p.y * 12 + (p.m - 1) + months;
  const y = Math.floor(total / 12);
  const m = total - y * 12 + 1;
  if (y < 1 || y > 9999) return null;
  const d = Math.min(p.d, daysInMonth(y, m));
  return `${pad(y, 4)}-${pad(m)}-${pad(d)}`;
}

const ADVISER = "The lab's regulatory adviser has the last word on the label.";

/**
 * Which dating the EU label needs: a best-before date for a minimum durability of
 * 30 months or less, a period after opening above 30 months (Art. 19(1)(c)).
 */
export function labelDating(input: LabelDatingInput): LabelDating {
  const { shelfLifeMonths: months, madeDate, periodAfterOpeningMonths } = input;
  const pao = periodAfterOpeningMonths ?? null;
  const invalid = (why: string): LabelDating => ({
    rule: null,
    bestBefore: null,
    periodAfterOpeningMonths: null,
    text: why,
    usNote: US_NOTE,
  });
  if (!Number.isInteger(months) || months < 1) {
    return invalid(`The shelf life must be a whole number of months, at least 1; got ${months}.`);
  }
  if (pao !== null && (!Number.isInteger(pao) || pao < 1)) {
    return invalid(`The period after opening must be a whole number of months, at least 1; got ${pao}.`);
  }
  if (madeDate != null && !parseIsoDate(madeDate)) {
    return invalid(`The made date must be a real date written YYYY-MM-DD; got "${madeDate}".`);
  }

  if (months <= EU_BEST_BEFORE_THRESHOLD_MONTHS) {
    const bestBefore = madeDate != null ? addCalendarMonths(madeDate, months) : null;
    const when =
      bestBefore !== null
        ? `best used before the end of ${bestBefore.slice(0, 7)} (made ${madeDate} + ${months} months = ${bestBefore})`
        : `the made date + ${months} months`;
    const paoText = pao !== null ? ` A period after opening of ${pao} months may be shown as well.` : '';
    return {
      rule: 'best_before',
      bestBefore,
      periodAfterOpeningMonths: pao,
      text: `EU Regulation 1223/2009, Art. 19(1)(c): a minimum durability of ${months} months (30 months or less) must be shown as a date of minimum durability, after the hourglass symbol or the words "best used before the end of": ${when}.${paoText} ${ADVISER}`,
      usNote: US_NOTE,
    };
  }
  const paoText =
    pao !== null
      ? `show the open-jar symbol with ${pao}M (${pao} months after opening)`
      : 'show the open-jar symbol with the period after opening in months (none set yet), unless durability after opening is not relevant to the product';
  return {
    rule: 'period_after_opening',
    bestBefore: null,
    periodAfterOpeningMonths: pao,
    text: `EU Regulation 1223/2009, Art. 19(1)(c): a minimum durability of ${months} months exceeds 30 months, so no best-before date is required; ${paoText}. ${ADVISER}`,
    usNote: US_NOTE,
  };
}
