/**
 * Acceptance criteria in words, for plan summaries and the study page:
 * "within ±0.5 of day 0", "within ±20 % of day 0", "at worst slight change vs control".
 * Pure; no I/O.
 */
import { COMPARED_LEVEL_LABELS, type Criterion } from '@shared/compute/criteria';
import type { AttributeScaleStep } from '@shared/domain';

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

function withUnit(x: number, unit: string | null | undefined): string {
  if (!unit) return formatNumber(x);
  // Percent and degree signs follow the number with a space too (SI style).
  return `${formatNumber(x)} ${unit}`;
}

/** The criterion in a few plain words. */
export function criterionText(criterion: Criterion, subject: CriterionSubject = {}): string {
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
