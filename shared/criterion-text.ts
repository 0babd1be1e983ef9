/**
 * Acceptance criteria in words, the one wording everywhere (Attributes page, plans, the Record
 * screen, analysis, the web and PDF reports): "within ±0.5 of day 0", "within ±20 % of day 0",
 * "at worst slight change vs control". Pure; no I/O.
 */
import { COMPARED_LEVEL_LABELS, type Criterion } from './compute/criteria';
import type { AttributeScaleStep } from './domain';

export interface CriterionSubject {
  /** Unit written after numbers, e.g. 'mPa·s' (none for pH). */
  unit?: string | null;
  /** A graded attribute's scale, to name the worst allowed grade. */
  scale?: readonly AttributeScaleStep[] | null;
}

/** A number as entered, without binary noise (0.1 + 0.2 shows as 0.3); a true minus sign. */
export function formatNumber(x: number): string {
  const s = String(Number(x.toPrecision(12)));
  return s.startsWith('-') ? `−${s.slice(1)}` : s;
}

/**
 * A reading shown with at least its attribute's decimals ("5.50" for a pH of 5.5 kept to 2 decimals),
 * never fewer and never rounding away digits that were typed; a true minus sign.
 */
export function formatDecimals(x: number, decimals: number | null | undefined): string {
  const plain = formatNumber(x);
  const d = Math.min(10, Math.max(0, Math.round(decimals ?? 0)));
  const has = plain.includes('.') ? plain.length - plain.indexOf('.') - 1 : 0;
  if (has >= d || /e/i.test(plain)) return plain;
  const fixed = Math.abs(x).toFixed(d);
  return x < 0 && Number(fixed) !== 0 ? `−${fixed}` : fixed;
}

function withUnit(x: number, unit: string | null | undefined): string {
  if (!unit) return formatNumber(x);
  // Percent and degree signs follow the number with a space too (SI style).
  return `${formatNumber(x)} ${unit}`;
}

/** The criterion in a few plain words ("No criterion" when there is none). */
export function criterionText(criterion: Criterion | null | undefined, subject: CriterionSubject = {}): string {
  if (!criterion) return 'No criterion';
  const unit = subject.unit ?? null;
  switch (criterion.kind) {
    case 'range': {
      const { min, max } = criterion;
      if (min != null && max != null) return `within ${formatNumber(min)}–${withUnit(max, unit)}`;
      if (min != null) return `at least ${withUnit(min, unit)}`;
      if (max != null) return `at most ${withUnit(max, unit)}`;
      return 'no limits set';
    }
    case 'change_abs':
      return `within ±${withUnit(criterion.max, unit)} of day 0`;
    case 'change_pct':
      return `within ±${formatNumber(criterion.max)} % of day 0`;
    case 'delta_e00_max':
      return `colour difference from day 0 at most ${formatNumber(criterion.max)} (ΔE00)`;
    case 'worst_grade': {
      const step = subject.scale?.find((s) => s.grade === criterion.grade);
      const name = step ? ` (${step.label})` : '';
      return criterion.grade === 0 ? `grade 0${name} only` : `at worst grade ${criterion.grade}${name}`;
    }
    case 'worst_compared':
      return criterion.level === 'no_change'
        ? 'no change vs control'
        : `at worst ${COMPARED_LEVEL_LABELS[criterion.level]} change vs control`;
    case 'must_pass':
      return 'must pass';
    case 'none':
      return 'recorded only, no criterion';
  }
}
