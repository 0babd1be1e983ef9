/**
 * Acceptance criteria: evaluation of one observed value against its criterion (the same code runs
 * on the client while typing and on the server when saving), physical-range checks and defaults.
 * Pure functions; no I/O.
 */
import { roundTo } from './units';

/** What kind of value an attribute records. */
export type AttributeKind = 'measured' | 'graded' | 'compared' | 'pass_fail' | 'note';
export const ATTRIBUTE_KINDS = ['measured', 'graded', 'compared', 'pass_fail', 'note'] as const satisfies readonly AttributeKind[];

/** Comparison with the control sample, best to worst. */
export type ComparedLevel = 'no_change' | 'slight' | 'marked' | 'severe';
export const COMPARED_LEVELS: readonly ComparedLevel[] = ['no_change', 'slight', 'marked', 'severe'];
export const COMPARED_LEVEL_LABELS: Readonly<Record<ComparedLevel, string>> = {
  no_change: 'no change',
  slight: 'slight',
  marked: 'marked',
  severe: 'severe',
};

/** An acceptance criterion. Change criteria are judged against the day-0 (baseline) value. */
export type Criterion =
  | { kind: 'range'; min?: number | null; max?: number | null }
  | { kind: 'change_abs'; max: number }
  | { kind: 'change_pct'; max: number }
  /** Colour difference from day 0 at most `max` ΔE00 (the value is a ΔE00, e.g. measured from photos). */
  | { kind: 'delta_e00_max'; max: number }
  | { kind: 'worst_grade'; grade: number }
  | { kind: 'worst_compared'; level: ComparedLevel }
  | { kind: 'must_pass' }
  | { kind: 'none' };
export type CriterionKind = Criterion['kind'];

/** Criterion kinds that make sense for each attribute kind ('none' is always allowed). */
export const CRITERION_KINDS_BY_ATTRIBUTE: Readonly<Record<AttributeKind, readonly CriterionKind[]>> = {
  measured: ['range', 'change_abs', 'change_pct', 'delta_e00_max', 'none'],
  graded: ['worst_grade', 'none'],
  compared: ['worst_compared', 'none'],
  pass_fail: ['must_pass', 'none'],
  note: ['none'],
};

/** An observed value: number (measured), integer grade (graded), level (compared), boolean (pass/fail), text (note). */
export type ObservedValue = number | boolean | string;

/** Outcome of {@link evaluate}. */
export type Verdict = 'pass' | 'fail' | 'no_criterion' | 'needs_baseline';

export interface Evaluation {
  verdict: Verdict;
  /** One sentence that explains the verdict, e.g. "pH 5.9 is 0.6 from day-0 5.3; allowed ±0.5". */
  message: string;
}

/** What the message calls the value. */
export interface EvaluationSubject {
  /** Attribute name, e.g. 'pH' (default 'Value'). */
  name?: string;
  /** Unit shown after numbers, e.g. 'mPa·s'. */
  unit?: string | null;
  /** Labels of a graded scale by grade, e.g. ['none', 'faint oil sheen', ...]. */
  gradeLabels?: readonly string[];
}

/** Comparisons allow this much float slack (so 5.8 vs 5.3 with ±0.5 passes whatever the binary noise). */
export const CRITERIA_TOLERANCE = 1e-9;

/** Formats an entered number (value, baseline, limit) without binary noise beyond 10 decimals. */
function fmt(x: number): string {
  return String(roundTo(x, 10));
}

/**
 * Formats a computed change to `decimals` places; when a failing change would display as the limit
 * itself (e.g. 0.50001 shown as 0.5), says "more than <limit>" instead.
 */
function fmtChange(change: number, limit: number, ok: boolean, decimals: number): string {
  const shown = roundTo(change, decimals);
  return !ok && shown <= limit ? `more than ${fmt(limit)}` : String(shown);
}

function withUnit(x: number, unit: string | null | undefined): string {
  return unit ? `${fmt(x)} ${unit}` : fmt(x);
}

function gradeText(grade: number, labels: readonly string[] | undefined): string {
  const label = labels?.[grade];
  return label ? `${grade} (${label})` : String(grade);
}

function expectNumber(value: ObservedValue, what: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new TypeError(`${what} needs a finite number, got ${JSON.stringify(value)}`);
  }
  return value;
}

function isComparedLevel(x: unknown): x is ComparedLevel {
  return typeof x === 'string' && (COMPARED_LEVELS as readonly string[]).includes(x);
}

/**
 * Checks a criterion's own settings; returns a message for an unusable criterion, else null
 * (e.g. a range with min above max, a negative allowed change, an unknown compared level).
 */
export function criterionError(criterion: Criterion): string | null {
  const finiteOrNull = (x: number | null | undefined) => x == null || Number.isFinite(x);
  switch (criterion.kind) {
    case 'range':
      if (!finiteOrNull(criterion.min) || !finiteOrNull(criterion.max)) return 'Range limits must be numbers';
      if (criterion.min == null && criterion.max == null) return 'A range needs a minimum, a maximum or both';
      if (criterion.min != null && criterion.max != null && criterion.min > criterion.max) {
        return `The minimum ${fmt(criterion.min)} is above the maximum ${fmt(criterion.max)}`;
      }
      return null;
    case 'change_abs':
    case 'change_pct':
    case 'delta_e00_max':
      return Number.isFinite(criterion.max) && criterion.max >= 0 ? null : 'The allowed change must be a number of at least 0';
    case 'worst_grade':
      return Number.isInteger(criterion.grade) && criterion.grade >= 0 ? null : 'The worst allowed grade must be a whole number of at least 0';
    case 'worst_compared':
      return isComparedLevel(criterion.level) ? null : `Unknown comparison level ${JSON.stringify(criterion.level)}`;
    case 'must_pass':
    case 'none':
      return null;
    default:
      return `Unknown criterion kind ${JSON.stringify((criterion as { kind: unknown }).kind)}`;
  }
}

/**
 * Evaluates one observed value against its criterion. Limits are inclusive with a 1e-9 float
 * tolerance. Change criteria without a day-0 value (or change_pct from a day-0 value of 0, where a
 * percent change is undefined) give 'needs_baseline' with an explanation, never NaN.
 * Throws TypeError when the value's type does not fit the criterion (e.g. text for a range), and
 * RangeError for an unusable criterion (see {@link criterionError}).
 */
export function evaluate(
  criterion: Criterion,
  value: ObservedValue,
  baseline?: number | null,
  subject: EvaluationSubject = {},
): Evaluation {
  const name = subject.name ?? 'Value';
  const unit = subject.unit;
  if (criterion.kind === 'none') return { verdict: 'no_criterion', message: `No acceptance criterion set for ${name}` };
  const problem = criterionError(criterion);
  if (problem) throw new RangeError(problem);
  const tol = CRITERIA_TOLERANCE;

  switch (criterion.kind) {
    case 'range': {
      const v = expectNumber(value, 'A range criterion');
      const { min, max } = criterion;
      if (min != null && v < min - tol) {
        return { verdict: 'fail', message: `${name} ${withUnit(v, unit)} is below the minimum ${withUnit(min, unit)}` };
      }
      if (max != null && v > max + tol) {
        return { verdict: 'fail', message: `${name} ${withUnit(v, unit)} is above the maximum ${withUnit(max, unit)}` };
      }
      const bounds =
        min != null && max != null
          ? `within ${fmt(min)}–${withUnit(max, unit)}`
          : min != null
            ? `at or above the minimum ${withUnit(min, unit)}`
            : `at or below the maximum ${withUnit(max as number, unit)}`;
      return { verdict: 'pass', message: `${name} ${withUnit(v, unit)} is ${bounds}` };
    }
    case 'change_abs': {
      const v = expectNumber(value, 'A change criterion');
      if (baseline == null || !Number.isFinite(baseline)) {
        return { verdict: 'needs_baseline', message: `No day-0 value for ${name} yet, so the change cannot be judged` };
      }
      const change = Math.abs(v - baseline);
      const ok = change <= criterion.max + tol;
      const changeText = fmtChange(change, criterion.max, ok, 4) + (unit ? ` ${unit}` : '');
      return {
        verdict: ok ? 'pass' : 'fail',
        message: `${name} ${withUnit(v, unit)} is ${changeText} from day-0 ${withUnit(baseline, unit)}; allowed ±${withUnit(criterion.max, unit)}`,
      };
    }
    case 'change_pct': {
      const v = expectNumber(value, 'A change criterion');
      if (baseline == null || !Number.isFinite(baseline)) {
        return { verdict: 'needs_baseline', message: `No day-0 value for ${name} yet, so the change cannot be judged` };
      }
      if (baseline === 0) {
        return {
          verdict: 'needs_baseline',
          message: `The day-0 value of ${name} is 0, so a percent change is undefined; use an absolute change or a range instead`,
        };
      }
      const pct = (Math.abs(v - baseline) / Math.abs(baseline)) * 100;
      const ok = pct <= criterion.max + tol;
      return {
        verdict: ok ? 'pass' : 'fail',
        message: `${name} ${withUnit(v, unit)} is ${fmtChange(pct, criterion.max, ok, 2)} % from day-0 ${withUnit(baseline, unit)}; allowed ±${fmt(criterion.max)} %`,
      };
    }
    case 'delta_e00_max': {
      const v = expectNumber(value, 'A colour-difference criterion');
      const ok = v <= criterion.max + tol;
      return { verdict: ok ? 'pass' : 'fail', message: `${name} ΔE00 ${fmtChange(v, criterion.max, ok, 2)} from day 0; allowed at most ${fmt(criterion.max)}` };
    }
    case 'worst_grade': {
      const g = expectNumber(value, 'A grade criterion');
      if (!Number.isInteger(g) || g < 0) throw new TypeError(`A grade must be a whole number of at least 0, got ${g}`);
      const ok = g <= criterion.grade;
      const worst = gradeText(criterion.grade, subject.gradeLabels);
      return {
        verdict: ok ? 'pass' : 'fail',
        message: ok
          ? `${name} grade ${gradeText(g, subject.gradeLabels)}; worst allowed ${worst}`
          : `${name} grade ${gradeText(g, subject.gradeLabels)} is worse than the worst allowed ${worst}`,
      };
    }
    case 'worst_compared': {
      if (!isComparedLevel(value)) {
        throw new TypeError(`A comparison criterion needs one of ${COMPARED_LEVELS.join(', ')}, got ${JSON.stringify(value)}`);
      }
      const ok = COMPARED_LEVELS.indexOf(value) <= COMPARED_LEVELS.indexOf(criterion.level);
      const seen = COMPARED_LEVEL_LABELS[value];
      const worst = COMPARED_LEVEL_LABELS[criterion.level];
      return {
        verdict: ok ? 'pass' : 'fail',
        message: ok
          ? `${name}: ${seen} versus control; worst allowed ${worst}`
          : `${name}: ${seen} versus control is worse than the worst allowed ${worst}`,
      };
    }
    case 'must_pass': {
      if (typeof value !== 'boolean') throw new TypeError(`A must-pass criterion needs true or false, got ${JSON.stringify(value)}`);
      return value
        ? { verdict: 'pass', message: `${name}: passed` }
        : { verdict: 'fail', message: `${name}: failed; must pass` };
    }
  }
}

/** Physical limits by normalized attribute code (lowercase, letters and digits only). */
const PHYSICAL_LIMITS: ReadonlyArray<{ codes: readonly string[]; name: string; min: number; max?: number; unit?: string }> = [
  { codes: ['ph'], name: 'pH', min: 0, max: 14 },
  { codes: ['viscosity', 'visc'], name: 'Viscosity', min: 0 },
  { codes: ['mass', 'weight', 'massg', 'weightg'], name: 'Mass', min: 0 },
  { codes: ['wateractivity', 'aw'], name: 'Water activity', min: 0, max: 1 },
  { codes: ['l', 'lstar', 'colorl', 'colourl'], name: 'L*', min: 0, max: 100 },
];

function normalizeCode(code: string): string {
  return code
    .toLowerCase()
    .replace(/\*/g, 'star')
    .replace(/[^a-z0-9]/g, '');
}

/**
 * Message for a physically impossible value, else null: pH outside 0–14, negative viscosity or
 * mass, water activity outside 0–1, L* outside 0–100, or a non-finite number for any of these.
 * Codes are matched loosely ('pH', 'ph', 'water_activity', 'aw', 'L*', 'l_star', ...); other codes give null.
 */
export function physicalRangeError(attributeCode: string, value: number): string | null {
  const code = normalizeCode(attributeCode);
  const limit = PHYSICAL_LIMITS.find((l) => l.codes.includes(code));
  if (!limit) return null;
  if (!Number.isFinite(value)) return `${limit.name} must be a number`;
  if (limit.max === undefined) {
    return value < limit.min ? `${limit.name} cannot be negative (got ${fmt(value)})` : null;
  }
  if (value < limit.min || value > limit.max) {
    return `${limit.name} must be between ${limit.min} and ${limit.max} (got ${fmt(value)})`;
  }
  return null;
}

/**
 * Default criteria by attribute code (common practice, no published source; DESIGN.md):
 * pH within ±0.5 of day 0, viscosity within ±20 % of day 0, ΔE00 at most 2 versus day 0,
 * odor, color, appearance and texture at worst 'slight' versus control, separation at worst grade 1.
 */
export const DEFAULT_CRITERIA: Readonly<Record<string, Criterion>> = {
  ph: { kind: 'change_abs', max: 0.5 },
  viscosity: { kind: 'change_pct', max: 20 },
  delta_e00: { kind: 'range', max: 2 },
  odor: { kind: 'worst_compared', level: 'slight' },
  color: { kind: 'worst_compared', level: 'slight' },
  appearance: { kind: 'worst_compared', level: 'slight' },
  texture: { kind: 'worst_compared', level: 'slight' },
  separation: { kind: 'worst_grade', grade: 1 },
};

/** The default criterion for an attribute code (see {@link DEFAULT_CRITERIA}), or { kind: 'none' }. */
export function defaultCriterion(attributeCode: string): Criterion {
  const key = attributeCode.toLowerCase().replace(/[^a-z0-9]+/g, '_').replace(/^_|_$/g, '');
  const aliases: Record<string, string> = { odour: 'odor', colour: 'color', de00: 'delta_e00', deltae00: 'delta_e00', delta_e_00: 'delta_e00' };
  const canonical = Object.hasOwn(aliases, key) ? aliases[key] : key;
  return Object.hasOwn(DEFAULT_CRITERIA, canonical) ? { ...DEFAULT_CRITERIA[canonical] } : { kind: 'none' };
}
