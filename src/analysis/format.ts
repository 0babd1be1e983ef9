/**
 * Numbers and words for the analysis screens. Every number goes through these guards, so a
 * missing or non-finite value shows as a dash and never as NaN, Infinity or undefined.
 * Pure; no I/O.
 */
import { COMPARED_LEVELS, COMPARED_LEVEL_LABELS, type ComparedLevel } from '@shared/compute/criteria';
import type { ReasonMethod, SuggestResult } from '@shared/compute/suggest';
import { daysBetween } from '@shared/compute/schedule';
import type { StoredVerdict } from '@shared/domain';
import type { AnalysisAttribute, AnalysisCondition, AnalysisVariant } from './types';

export const DASH = '—';

/** True for a finite number. */
export const isNum = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);

/** A number with fixed decimals and a true minus sign; a dash for anything that is not a finite number. */
export function num(x: unknown, decimals = 2): string {
  if (!isNum(x)) return DASH;
  const d = Math.min(10, Math.max(0, Math.round(isNum(decimals) ? decimals : 2)));
  const s = x.toFixed(d);
  // "-0.00" reads as a change that is not there.
  if (/^-0(\.0+)?$/.test(s)) return s.slice(1);
  return s.startsWith('-') ? `−${s.slice(1)}` : s;
}

/** A number with its unit ("12 400 mPa·s", "5.42"); a dash when there is no number. */
export function withUnit(x: unknown, unit: string | null | undefined, decimals = 2): string {
  const n = num(x, decimals);
  if (n === DASH || !unit) return n;
  return `${n} ${unit}`;
}

/** Months as people say them: "11 months", "1 month", "3.7 months", "0 months". */
export function monthsText(x: unknown, decimals = 1): string {
  if (!isNum(x)) return DASH;
  const whole = Math.abs(x - Math.round(x)) < 1e-9;
  const shown = whole ? String(Math.round(x)) : num(x, decimals);
  return `${shown} ${shown === '1' ? 'month' : 'months'}`;
}

/** °C written with a space and a true minus sign ("−10 °C"); a dash without a number. */
export function celsius(x: unknown, decimals = 0): string {
  return isNum(x) ? `${num(x, decimals)} °C` : DASH;
}

export const VARIANT_LABEL = (v: Pick<AnalysisVariant, 'code' | 'name'>) => (v.name && v.name !== v.code ? `${v.code}: ${v.name}` : v.code);

export const ROLE_LABELS: Readonly<Record<string, string>> = {
  control: 'Control',
  real_time: 'Real time',
  accelerated: 'Accelerated',
  stress: 'Stress test',
};

export const KIND_LABELS: Readonly<Record<string, string>> = {
  constant: 'Constant',
  cycling: 'Cycling',
  light: 'Light',
  mechanical: 'Centrifuge',
};

/** "Accelerated · oven 2" */
export function conditionFacts(c: Pick<AnalysisCondition, 'role' | 'kind' | 'location'>): string {
  const parts = [ROLE_LABELS[c.role] ?? c.role];
  if (c.kind !== 'constant') parts.push(KIND_LABELS[c.kind] ?? c.kind);
  if (c.location) parts.push(c.location);
  return parts.join(' · ');
}

/** "MKT 45.12 °C (2 184 readings)" or why there is none. */
export function mktText(c: Pick<AnalysisCondition, 'mkt'>): string {
  if (!c.mkt || !isNum(c.mkt.mktC)) return 'MKT: no chamber log for this period';
  const n = isNum(c.mkt.readings) ? c.mkt.readings : 0;
  return `MKT ${num(c.mkt.mktC, 2)} °C from ${n.toLocaleString('en-GB')} ${n === 1 ? 'reading' : 'readings'}`;
}

/**
 * Where the chamber log does not cover the study so far (more than a day missing at either end),
 * in words; null when it does. The MKT is over the readings there are, so a gap matters.
 */
export function logGap(m: { from: string; to: string; firstOn: string; lastOn: string }): string | null {
  const head = daysBetween(m.from, m.firstOn);
  const tail = daysBetween(m.lastOn, m.to);
  const days = (n: number) => `${n} ${n === 1 ? 'day' : 'days'}`;
  const parts: string[] = [];
  if (head > 1) parts.push(`the first ${days(head)} from day 0`);
  if (tail > 1) parts.push(`the last ${days(tail)}`);
  return parts.length ? `No chamber log for ${parts.join(' or ')}: the MKT covers only the logged days.` : null;
}

/** The meaning of each step of a graded, compared or pass/fail attribute, best first. */
export function levelsOf(a: Pick<AnalysisAttribute, 'kind' | 'scale'>): { value: number; short: string; label: string }[] {
  if (a.kind === 'compared') {
    return COMPARED_LEVELS.map((l, i) => ({ value: i, short: COMPARED_LEVEL_LABELS[l], label: `${COMPARED_LEVEL_LABELS[l]} vs control` }));
  }
  if (a.kind === 'pass_fail') {
    return [
      { value: 0, short: 'pass', label: 'Pass' },
      { value: 1, short: 'fail', label: 'Fail' },
    ];
  }
  const scale = [...(a.scale ?? [])].sort((x, y) => x.grade - y.grade);
  return scale.map((s) => ({ value: s.grade, short: String(s.grade), label: `${s.grade} ${s.label}` }));
}

/** A graded, compared or pass/fail value as a number on its scale (0 = best), or null. */
export function levelValue(kind: string, value: unknown): number | null {
  if (kind === 'graded') return isNum(value) ? value : null;
  if (kind === 'compared') {
    const i = COMPARED_LEVELS.indexOf(value as ComparedLevel);
    return i >= 0 ? i : null;
  }
  if (kind === 'pass_fail') return value === true ? 0 : value === false ? 1 : null;
  return null;
}

/** A recorded value in words ("5.42", "3 Visible layer", "slight", "Pass"). */
export function valueWords(a: Pick<AnalysisAttribute, 'kind' | 'unit' | 'decimals' | 'scale'>, value: unknown): string {
  if (value === null || value === undefined) return DASH;
  switch (a.kind) {
    case 'measured':
      return withUnit(value, a.unit, a.decimals);
    case 'graded': {
      const step = a.scale?.find((s) => s.grade === value);
      return step ? `${value} ${step.label}` : isNum(value) ? String(value) : DASH;
    }
    case 'compared':
      return COMPARED_LEVEL_LABELS[value as ComparedLevel] ?? String(value);
    case 'pass_fail':
      return value === true ? 'Pass' : value === false ? 'Fail' : DASH;
    default:
      return String(value);
  }
}

export const VERDICT_WORDS: Readonly<Record<StoredVerdict, string>> = {
  pass: 'Pass',
  fail: 'Fail',
  no_criterion: 'Recorded (no criterion)',
  needs_baseline: 'Cannot judge yet (no day-0 value)',
  not_done: 'Not done',
};


export const BASIS_LABELS: Readonly<Record<SuggestResult['basis'], string>> = {
  real_time: 'Real-time data',
  projection_only: 'Projection only',
  none: 'No figure yet',
};

/**
 * What a suggestion amounts to. A figure of at least 1 month; under 1 month because something failed
 * (at the first checkpoint, or a trend already at its limit): a real result; under 1 month only
 * because there is little data (one week passed, projected or capped): too early; no figure at all.
 */
export type SuggestionState = 'figure' | 'failed_early' | 'too_early' | 'none';

type Suggestion = Pick<SuggestResult, 'months' | 'governingReason' | 'reasons'>;

export function suggestionState(r: Suggestion): SuggestionState {
  if (!isNum(r.months)) return 'none';
  if (r.months >= 1) return 'figure';
  const gov = r.governingReason == null ? undefined : r.reasons[r.governingReason];
  if (!gov) return 'too_early';
  // From the governing reason (shared/compute/suggest.ts): an observed line is a real-time failure; a
  // Q10 line projected after a failure is one too; a regression figure is the trend meeting its limit
  // unless it was capped for lack of real-time data.
  const failed =
    gov.method === 'observed' || (gov.method === 'q10' && gov.afterFailure === true) || (gov.method === 'regression' && !gov.capped);
  return failed ? 'failed_early' : 'too_early';
}

/** The headline of a suggestion: "11 months", "Under 1 month" (failed early), "Too early to tell" or "Not enough data yet". */
export function suggestionHeadline(r: Suggestion): string {
  switch (suggestionState(r)) {
    case 'figure':
      return monthsText(r.months, 0);
    case 'failed_early':
      return 'Under 1 month';
    case 'too_early':
      return 'Too early to tell';
    case 'none':
      return 'Not enough data yet';
  }
}

/** A line under the headline when it is not a plain figure; null for a figure. */
export function suggestionNote(r: Suggestion): string | null {
  switch (suggestionState(r)) {
    case 'figure':
      return null;
    case 'failed_early':
      return 'Failed early: see the reasons.';
    case 'too_early':
      return 'The data so far support less than 1 month: record more checkpoints.';
    case 'none':
      return null; // the confidence note says what is missing
  }
}

/** A file name part from any text: lower case letters, digits and dashes. */
export function slug(s: string): string {
  return (
    s
      .normalize('NFKD')
      .replace(/[\u0300-\u036f]/g, '')
      .replace(/°/g, '')
      .toLowerCase()
      .replace(/[^a-z0-9]+/g, '-')
      .replace(/^-+|-+$/g, '')
      .slice(0, 60) || 'chart'
  );
}
