/**
 * Words for the Record screen: a value in its attribute's terms ("5.42", "12 000 mPa·s",
 * "1 (Faint oil sheen)", "slight", "Pass"), verdicts as icon + word, typed text to numbers,
 * and the live evaluation with the shared criteria function. Pure; no I/O.
 */
import { COMPARED_LEVEL_LABELS, evaluate, physicalRangeError, type ComparedLevel, type Criterion, type Evaluation } from '@shared/compute/criteria';
import type { StoredVerdict } from '@shared/domain';
import type { Attribute, StudyCheckpoint } from '@shared/schemas/studies';
import { formatDecimals, formatNumber } from '@/format/criterion';

export type Value = number | string | boolean;

/** One of a set of large choice buttons. */
export interface Choice<V> {
  value: V;
  label: string;
  /** Small text before the label, e.g. the grade number. */
  prefix?: string;
  icon?: string;
}

/** How each verdict is shown: a word and an icon (never color alone). */
export const VERDICT_SHOWN: Readonly<Record<StoredVerdict, { word: string; icon: string; tone: 'ok' | 'bad' | 'info' }>> = {
  pass: { word: 'Pass', icon: 'pass', tone: 'ok' },
  fail: { word: 'Fail', icon: 'fail', tone: 'bad' },
  no_criterion: { word: 'Recorded', icon: 'info', tone: 'info' },
  needs_baseline: { word: 'Cannot judge yet', icon: 'info', tone: 'info' },
  not_done: { word: 'Not done', icon: 'minus', tone: 'info' },
};

/** A value as a lab person reads it, with its unit; a measured number with at least its attribute's decimals ("5.50"). */
export function valueText(a: Pick<Attribute, 'kind' | 'unit' | 'scale'> & { decimals?: number | null }, value: Value | null | undefined): string {
  if (value === null || value === undefined) return '—';
  switch (a.kind) {
    case 'measured': {
      if (typeof value !== 'number') return String(value);
      const n = formatDecimals(value, a.decimals);
      return a.unit ? `${n} ${a.unit}` : n;
    }
    case 'graded': {
      const step = a.scale?.find((s) => s.grade === value);
      return step ? `${value} (${step.label})` : String(value);
    }
    case 'compared':
      return COMPARED_LEVEL_LABELS[value as ComparedLevel] ?? String(value);
    case 'pass_fail':
      return value === true ? 'Pass' : value === false ? 'Fail' : String(value);
    case 'note':
      return String(value);
  }
}

/** Method details as "neat" or "Spindle RV-5 · Speed 10 rpm · Temperature 25 °C". */
export function methodText(a: Pick<Attribute, 'methodFields'>, method: Record<string, string | number> | null | undefined): string {
  if (!method) return '';
  const fields = a.methodFields ?? [];
  const parts: string[] = [];
  for (const [k, v] of Object.entries(method)) {
    if (v === '' || v == null) continue;
    const f = fields.find((x) => x.key === k);
    const shown = typeof v === 'number' ? formatNumber(v) : v;
    if (f?.options) parts.push(String(shown));
    else parts.push(`${f?.label ?? k} ${shown}${f?.unit ? ` ${f.unit}` : ''}`);
  }
  return parts.join(' · ');
}

/**
 * A typed number: accepts a decimal comma ("5,42") and a true minus sign; empty gives null,
 * anything else that is not a plain number gives NaN.
 */
export function parseTyped(raw: string): number | null {
  const s = raw.trim().replace(/\s/g, '').replace(',', '.').replace('−', '-');
  if (s === '') return null;
  if (!/^[-+]?(\d+\.?\d*|\.\d+)(e[-+]?\d+)?$/i.test(s)) return NaN;
  return Number(s);
}

/** What the typed draft of one attribute means as an API value (null when nothing usable is typed). */
export function draftValue(a: Pick<Attribute, 'kind'>, typed: Value | null | undefined): Value | null {
  if (typed === null || typed === undefined) return null;
  if (a.kind === 'measured') {
    if (typeof typed === 'number') return typed;
    const n = parseTyped(String(typed));
    return n === null ? null : n;
  }
  if (a.kind === 'note' || a.kind === 'compared') return typeof typed === 'string' && typed.trim() ? typed.trim() : null;
  return typed;
}

/**
 * Why a typed value cannot be saved, or null: not a number, physically impossible
 * (pH outside 0–14, negative viscosity or mass...) or outside the attribute's own limits.
 */
export function typedProblem(a: Pick<Attribute, 'kind' | 'code' | 'name' | 'physicalMin' | 'physicalMax' | 'decimals'>, typed: Value | null | undefined): string | null {
  if (a.kind !== 'measured' || typed === null || typed === undefined || typed === '') return null;
  const n = typeof typed === 'number' ? typed : parseTyped(String(typed));
  if (n === null) return null;
  if (!Number.isFinite(n)) return `Type a number, e.g. ${a.decimals > 0 ? (5).toFixed(a.decimals) : '12000'}`;
  const physical = physicalRangeError(a.code, n);
  if (physical) return physical;
  if (a.physicalMin != null && n < a.physicalMin) return `${a.name} cannot be below ${formatNumber(a.physicalMin)}`;
  if (a.physicalMax != null && n > a.physicalMax) return `${a.name} cannot be above ${formatNumber(a.physicalMax)}`;
  return null;
}

/** Labels of a graded scale by grade, as the shared evaluation expects them. */
export function gradeLabels(a: Pick<Attribute, 'scale'>): string[] | undefined {
  if (!a.scale) return undefined;
  const out: string[] = [];
  for (const s of a.scale) out[s.grade] = s.label;
  return out;
}

/**
 * Pass or fail as typed, with the same shared function the server uses. On day 0 the value is its
 * own baseline (as on the server). Null when nothing is typed or the value does not fit.
 */
export function liveEvaluation(
  a: Pick<Attribute, 'kind' | 'name' | 'unit' | 'scale'>,
  criterion: Criterion,
  value: Value | null,
  baseline: Value | null | undefined,
  dayZero: boolean,
): Evaluation | null {
  if (value === null || a.kind === 'note') return null;
  if (typeof value === 'number' && !Number.isFinite(value)) return null;
  const base = dayZero ? value : baseline;
  try {
    return evaluate(criterion, value, typeof base === 'number' ? base : null, { name: a.name, unit: a.unit, gradeLabels: gradeLabels(a) });
  } catch {
    return null;
  }
}

/**
 * Whether a value at this checkpoint is its own baseline, as the server judges it: the initial test,
 * an old condition's own day 0 kept as extra readings, or a day-0 pull of a study without an initial test.
 */
export function judgedAgainstItself(cp: Pick<StudyCheckpoint, 'kind' | 'offset'>, baseline: { label: string } | null | undefined): boolean {
  if (cp.kind === 'initial' || cp.kind === 'extra_day0') return true;
  return cp.offset.n === 0 && cp.offset.unit !== 'cycle' && baseline?.label !== 'Initial';
}

/** Step attribute for a number input with `decimals` places ("0.01" for 2). */
export function stepFor(decimals: number): string {
  return decimals > 0 ? `0.${'0'.repeat(decimals - 1)}1` : '1';
}

/** Method details as the API takes them: known keys only, empty ones left out, numbers where a unit is given. */
export function methodForApi(
  fields: readonly { key: string; unit?: string }[] | null | undefined,
  typed: Record<string, string> | undefined,
): Record<string, string | number> | undefined {
  if (!fields?.length || !typed) return undefined;
  const out: Record<string, string | number> = {};
  for (const f of fields) {
    const raw = (typed[f.key] ?? '').trim();
    if (!raw) continue;
    const n = f.unit ? parseTyped(raw) : null;
    out[f.key] = n !== null && Number.isFinite(n) ? n : raw.slice(0, 60);
  }
  return Object.keys(out).length ? out : undefined;
}

/** Method details from the API as text for the inputs. */
export function methodForInputs(method: Record<string, string | number> | null | undefined): Record<string, string> {
  const out: Record<string, string> = {};
  for (const [k, v] of Object.entries(method ?? {})) out[k] = String(v);
  return out;
}

/** What is typed for one attribute, kept in the draft until the server confirms it. */
export interface EntryDraft {
  value: Value | null;
  method: Record<string, string>;
  notDone: boolean;
  notDoneReason: string;
}

export const emptyEntry = (): EntryDraft => ({ value: null, method: {}, notDone: false, notDoneReason: '' });

/** True when something was typed or chosen (method defaults alone do not count). */
export function entryHasContent(e: EntryDraft | undefined): boolean {
  if (!e) return false;
  if (e.notDone) return true;
  return e.value !== null && e.value !== '';
}
