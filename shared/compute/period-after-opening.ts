/**
 * A suggested period after opening (PAO), in the values usually printed beside the open-jar symbol
 * (EU Regulation 1223/2009, Annex VII, point 2: the period in months and/or years).
 * The mapping from risk outcome, pack and in-use data to months is common practice, no published
 * source: the owner decides, with the safety assessor.
 * Pure functions: no I/O, no clock.
 */
import type { PackType } from './microbial-risk';
import { DAYS_PER_MONTH } from './suggest';

export const PAO_STEPS = [6, 12, 18, 24] as const;
export type PaoMonths = (typeof PAO_STEPS)[number];

export interface PaoInput {
  lowRisk: boolean;
  pack: PackType | null;
  /** Months an in-use test (opened daily, room temperature) ran without a failure; null when none. */
  inUseMonths: number | null;
  /** The suggested or decided shelf life in months; the PAO never exceeds it. */
  shelfLifeMonths: number | null;
}

export interface PaoSuggestion {
  /** null when a period after opening is not relevant (single-use pack). */
  months: PaoMonths | null;
  reasons: string[];
  /** Always "common practice, no published source". */
  basis: string;
}

/** Common practice, no published source: starting point by risk outcome and pack. */
const BASE: Record<'low' | 'not_low', Record<Exclude<PackType, 'single_use'> | 'unknown', PaoMonths>> = {
  low: { open_jar: 12, narrow_orifice: 18, airless_pump: 24, unknown: 12 },
  not_low: { open_jar: 6, narrow_orifice: 12, airless_pump: 12, unknown: 6 },
};
/** Without in-use data the suggestion stays at or below this (common practice, no published source). */
export const PAO_CAP_WITHOUT_IN_USE = 12;

/** The largest step at or below `months`, or null below 6. */
export function stepAtOrBelow(months: number): PaoMonths | null {
  let out: PaoMonths | null = null;
  for (const s of PAO_STEPS) if (s <= months) out = s;
  return out;
}

export function suggestPao(i: PaoInput): PaoSuggestion {
  const basis = 'Common practice, no published source.';
  if (i.pack === 'single_use') {
    return { months: null, reasons: ['Single-use pack: durability after opening is usually not relevant (Art. 19(1)(c)); no period after opening suggested.'], basis };
  }
  const reasons: string[] = [];
  const risk = i.lowRisk ? 'low' : 'not_low';
  let months: number = BASE[risk][i.pack ?? 'unknown'];
  reasons.push(`${i.lowRisk ? 'Low' : 'Not low'} microbial risk with ${i.pack ? packWords[i.pack] : 'no pack chosen (taken as an open jar)'}: ${months} months to start from.`);
  if (i.inUseMonths !== null && i.inUseMonths > 0) {
    const covered = stepAtOrBelow(i.inUseMonths);
    if (covered === null) {
      months = 6;
      reasons.push(`In-use test covered ${i.inUseMonths} months, under 6: the shortest period, 6 months, and consider a longer in-use test.`);
    } else if (covered < months) {
      months = covered;
      reasons.push(`In-use test covered ${i.inUseMonths} months: no more than ${covered} months.`);
    } else {
      reasons.push(`In-use test covered ${i.inUseMonths} months: supports ${months} months.`);
    }
  } else if (months > PAO_CAP_WITHOUT_IN_USE) {
    months = PAO_CAP_WITHOUT_IN_USE;
    reasons.push(`No in-use data (opened daily, room temperature): at most ${PAO_CAP_WITHOUT_IN_USE} months.`);
  } else {
    reasons.push('No in-use data (opened daily, room temperature): an in-use test would support a longer period.');
  }
  if (i.shelfLifeMonths !== null && i.shelfLifeMonths > 0 && months > i.shelfLifeMonths) {
    const capped = stepAtOrBelow(i.shelfLifeMonths) ?? 6;
    reasons.push(`Not longer than the shelf life of ${i.shelfLifeMonths} months: ${capped} months.`);
    months = capped;
  }
  return { months: months as PaoMonths, reasons, basis };
}

const packWords: Record<PackType, string> = {
  open_jar: 'an open jar',
  narrow_orifice: 'a narrow orifice',
  airless_pump: 'an airless pump',
  single_use: 'a single-use pack',
};

/** One pull of an in-use test: its offset and the verdicts of the readings recorded there. */
export interface InUsePull {
  unit: 'day' | 'week' | 'month' | 'cycle';
  n: number;
  /** Stored verdicts of the readings at this pull ('pass', 'fail', 'no_criterion', 'not_done', ...); empty when none yet. */
  verdicts: string[];
}

/** An offset in months (cycles are not time: null). */
export function offsetMonths(unit: InUsePull['unit'], n: number): number | null {
  if (unit === 'month') return n;
  if (unit === 'week') return (n * 7) / DAYS_PER_MONTH;
  if (unit === 'day') return n / DAYS_PER_MONTH;
  return null;
}

/**
 * How long an in-use test has run without a failure: pulls in time order, up to the first pull with
 * no reading yet; a failure stops it at the pull before. Returns the months covered (one decimal,
 * rounded down) and the reason, or null months when no pull after day 0 has passed.
 */
export function inUseCoverage(pulls: InUsePull[]): { months: number | null; reason: string } {
  const timed = pulls
    .map((p) => ({ ...p, months: offsetMonths(p.unit, p.n) }))
    .filter((p): p is InUsePull & { months: number } => p.months != null && p.months > 0)
    .sort((a, b) => a.months - b.months);
  const label = (p: { unit: string; n: number }) => `${p.unit} ${p.n}`;
  let covered: (typeof timed)[number] | null = null;
  for (const p of timed) {
    // A reading marked not done says nothing about the product.
    if (!p.verdicts.some((v) => v !== 'not_done')) {
      return covered
        ? { months: floor1(covered.months), reason: `No failure up to ${label(covered)}; ${label(p)} not recorded yet.` }
        : { months: null, reason: `No in-use pull recorded yet (the first is ${label(p)}).` };
    }
    if (p.verdicts.includes('fail')) {
      return covered
        ? { months: floor1(covered.months), reason: `A failure at ${label(p)}: covered up to ${label(covered)}.` }
        : { months: null, reason: `A failure at the first in-use pull (${label(p)}): no period covered.` };
    }
    covered = p;
  }
  if (!covered) return { months: null, reason: 'No in-use pull after day 0 in the plan.' };
  return { months: floor1(covered.months), reason: `No failure at any pull, up to ${label(covered)}.` };
}

const floor1 = (x: number) => Math.floor(x * 10 + 1e-9) / 10;
