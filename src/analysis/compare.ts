/**
 * The one-screen comparison of two to four variants: every attribute at every condition (the
 * latest result, or the result as of a checkpoint the user picks, and whether it passes), the first
 * failure per condition, and each variant's suggested shelf life. Pure; no I/O.
 */
import { isCycleLabel } from '@shared/chart-style';
import type { SuggestResult } from '@shared/compute/suggest';
import { DASH, isNum, levelValue, num, valueWords } from './format';
import type { AnalysisAttribute, AnalysisCondition, AnalysisVariant, FirstFailure, StudyAnalysis } from './types';

export const MIN_COMPARE = 2;
export const MAX_COMPARE = 4;

export type CellState = 'pass' | 'fail' | 'recorded' | 'pending' | 'none';

export interface CompareCell {
  /** The latest result in words ("5.38", "3 Visible layer", "slight", "Pass"). */
  text: string;
  /** How many readings the latest result summarizes (mean for numbers, the worst for grades). */
  readings: number;
  /** The checkpoint of the latest result. */
  at: string | null;
  state: CellState;
  /** The first checkpoint where this attribute failed at this condition, if any. */
  firstFail: string | null;
}

export interface CompareRow {
  attribute: AnalysisAttribute;
  cells: CompareCell[];
}

export interface CompareCondition {
  condition: AnalysisCondition;
  rows: CompareRow[];
  firstFailures: (FirstFailure | null)[];
}

export interface CompareMatrix {
  variants: AnalysisVariant[];
  conditions: CompareCondition[];
  suggestions: (SuggestResult | null)[];
}

export const CELL_WORDS: Readonly<Record<CellState, string>> = {
  pass: 'Pass',
  fail: 'Fail',
  recorded: 'Recorded',
  pending: 'Not judged',
  none: 'No results',
};

/** Picks 2 to 4 known variant ids from a list (e.g. the URL), in the study's order; defaults to the first ones. */
export function pickVariants(all: readonly AnalysisVariant[], wanted: readonly number[]): number[] {
  const known = all.map((v) => v.id).filter((id) => wanted.includes(id)).slice(0, MAX_COMPARE);
  if (known.length >= MIN_COMPARE) return known;
  const fill = [...known, ...all.map((v) => v.id).filter((id) => !known.includes(id))];
  return fill.slice(0, Math.min(MAX_COMPARE, Math.max(MIN_COMPARE, known.length)));
}

/** A checkpoint the comparison can be read at. */
export interface CompareCheckpoint {
  label: string;
  /** Months from day 0 (its due date's, for cycles). */
  months: number;
  /** A freeze-thaw cycle (listed apart from the checkpoints in time). */
  cycle: boolean;
}

/** Checkpoints with results for these variants, in time order: first those in time, then the cycles. */
export function compareCheckpoints(a: StudyAnalysis, variantIds: readonly number[]): CompareCheckpoint[] {
  const byLabel = new Map<string, CompareCheckpoint>();
  for (const s of a.series) {
    if (!variantIds.includes(s.variantId)) continue;
    for (const p of s.points) {
      if (!isNum(p.months) || p.value === null || p.value === undefined || p.verdict === 'not_done') continue;
      const had = byLabel.get(p.label);
      if (!had || p.months < had.months) byLabel.set(p.label, { label: p.label, months: p.months, cycle: isCycleLabel(p.label) });
    }
  }
  return [...byLabel.values()].sort((x, y) => Number(x.cycle) - Number(y.cycle) || x.months - y.months || x.label.localeCompare(y.label));
}

/** Results up to this many months (a checkpoint the user picked); null for every result. */
const upTo = (asOf: number | null | undefined) => (p: { months: number }) => isNum(p.months) && (asOf == null || p.months <= asOf + 1e-9);

/** The latest result of one attribute for one variant at one condition (as of a time in months, when given). */
export function compareCell(a: StudyAnalysis, attr: AnalysisAttribute, variantId: number, conditionId: number, asOf: number | null = null): CompareCell {
  const pts = a.series
    .filter((s) => s.studyAttributeId === attr.id && s.variantId === variantId && s.studyConditionId === conditionId)
    .flatMap((s) => s.points)
    .filter(upTo(asOf));
  const done = pts.filter((p) => p.verdict !== 'not_done' && p.value !== null && p.value !== undefined);
  const fails = pts.filter((p) => p.verdict === 'fail').sort((x, y) => x.months - y.months);
  const firstFail = fails[0]?.label ?? null;
  if (!done.length) return { text: DASH, readings: 0, at: null, state: 'none', firstFail };
  const lastMonths = Math.max(...done.map((p) => p.months));
  const last = done.filter((p) => Math.abs(p.months - lastMonths) < 1e-9);
  let text: string;
  if (attr.kind === 'measured') {
    const xs = last.map((p) => p.value).filter(isNum);
    text = xs.length ? valueWords(attr, xs.reduce((s, x) => s + x, 0) / xs.length) : DASH;
  } else if (attr.kind === 'graded' || attr.kind === 'compared' || attr.kind === 'pass_fail') {
    // the worst result at the latest checkpoint
    const worst = last.reduce<{ v: unknown; lv: number } | null>((w, p) => {
      const lv = levelValue(attr.kind, p.value);
      return lv !== null && (w === null || lv > w.lv) ? { v: p.value, lv } : w;
    }, null);
    text = worst ? valueWords(attr, worst.v) : DASH;
  } else {
    text = String(last[0].value);
  }
  const state: CellState = last.some((p) => p.verdict === 'fail')
    ? 'fail'
    : last.every((p) => p.verdict === 'pass')
      ? 'pass'
      : last.some((p) => p.verdict === 'no_criterion')
        ? 'recorded'
        : 'pending';
  return { text, readings: last.length, at: last[0].label, state, firstFail };
}

/** The first failure of a variant at a condition up to a time (months), from the results. */
function firstFailureAsOf(a: StudyAnalysis, variantId: number, conditionId: number, asOf: number): FirstFailure {
  const fails = a.series
    .filter((x) => x.variantId === variantId && x.studyConditionId === conditionId)
    .flatMap((x) => x.points.filter((p) => p.verdict === 'fail' && upTo(asOf)(p)).map((p) => ({ p, attr: a.attributes.find((y) => y.id === x.studyAttributeId)?.name ?? '' })));
  const first = fails.sort((x, y) => x.p.months - y.p.months)[0];
  // The server's count less the judged readings after `asOf`: those are never the initial test (at 0 months).
  const later = a.series
    .filter((x) => x.variantId === variantId && x.studyConditionId === conditionId)
    .reduce((n, x) => n + x.points.filter((p) => isNum(p.months) && p.months > asOf + 1e-9 && (p.verdict === 'pass' || p.verdict === 'fail')).length, 0);
  const all = a.firstFailures.find((f) => f.variantId === variantId && f.studyConditionId === conditionId)?.dataPoints ?? 0;
  return {
    variantId,
    studyConditionId: conditionId,
    label: first?.p.label ?? null,
    months: first?.p.months ?? null,
    attributes: first ? [...new Set(fails.filter((f) => f.p.months === first.p.months).map((f) => f.attr))] : [],
    dataPoints: Math.max(0, all - later),
  };
}

/** Every attribute (notes left out) at every condition for the chosen variants, latest or as of a time (months). */
export function compareMatrix(a: StudyAnalysis, variantIds: readonly number[], asOf: number | null = null): CompareMatrix {
  const variants = variantIds.map((id) => a.variants.find((v) => v.id === id)).filter((v): v is AnalysisVariant => !!v);
  const attrs = a.attributes.filter((x) => x.kind !== 'note');
  const conditions = [...a.conditions]
    .sort((x, y) => {
      const k = (c: AnalysisCondition) => (c.kind === 'constant' ? 0 : 1);
      return k(x) - k(y) || (x.setpointC ?? 0) - (y.setpointC ?? 0) || x.id - y.id;
    })
    .map((c) => ({
      condition: c,
      rows: attrs.map((attr) => ({ attribute: attr, cells: variants.map((v) => compareCell(a, attr, v.id, c.id, asOf)) })),
      firstFailures: variants.map((v) =>
        asOf == null ? (a.firstFailures.find((f) => f.variantId === v.id && f.studyConditionId === c.id) ?? null) : firstFailureAsOf(a, v.id, c.id, asOf),
      ),
    }));
  return {
    variants,
    conditions,
    suggestions: variants.map((v) => a.suggestions.find((s) => s.variantId === v.id)?.result ?? null),
  };
}

/** "Week 8 (1.84 months): Separation" or "None so far"; months left out for cycles and runs. */
export function firstFailureText(f: FirstFailure | null, inMonths = true): string {
  if (!f || !f.label) return 'None so far';
  const when = inMonths && isNum(f.months) ? ` (${num(f.months, 2)} months)` : '';
  return `${f.label}${when}: ${f.attributes.join(', ') || 'a result'}`;
}
