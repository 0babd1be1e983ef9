/**
 * The one-screen comparison of two to four variants: every attribute at every condition (the
 * latest result and whether it passes), the first failure per condition, and each variant's
 * suggested shelf life. Pure; no I/O.
 */
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

/** The latest result of one attribute for one variant at one condition. */
export function compareCell(a: StudyAnalysis, attr: AnalysisAttribute, variantId: number, conditionId: number): CompareCell {
  const pts = a.series
    .filter((s) => s.studyAttributeId === attr.id && s.variantId === variantId && s.studyConditionId === conditionId)
    .flatMap((s) => s.points)
    .filter((p) => isNum(p.months));
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

/** Every attribute (notes left out) at every condition for the chosen variants. */
export function compareMatrix(a: StudyAnalysis, variantIds: readonly number[]): CompareMatrix {
  const variants = variantIds.map((id) => a.variants.find((v) => v.id === id)).filter((v): v is AnalysisVariant => !!v);
  const attrs = a.attributes.filter((x) => x.kind !== 'note');
  const conditions = [...a.conditions]
    .sort((x, y) => {
      const k = (c: AnalysisCondition) => (c.kind === 'constant' ? 0 : 1);
      return k(x) - k(y) || (x.setpointC ?? 0) - (y.setpointC ?? 0) || x.id - y.id;
    })
    .map((c) => ({
      condition: c,
      rows: attrs.map((attr) => ({ attribute: attr, cells: variants.map((v) => compareCell(a, attr, v.id, c.id)) })),
      firstFailures: variants.map((v) => a.firstFailures.find((f) => f.variantId === v.id && f.studyConditionId === c.id) ?? null),
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
