/**
 * Out-of-specification (OOS) investigations in words, for the study's Investigations tab, the
 * review page and the web report: the bench step, the conclusion, a value in its attribute's terms.
 * Same words as the PDF (server/services/report.ts). Pure; no I/O.
 */
import { COMPARED_LEVEL_LABELS, type ComparedLevel } from '@shared/compute/criteria';
import type { OosBenchStep } from '@shared/domain';
import type { Investigation } from '@shared/schemas/oos';
import type { PlanAttribute } from '@shared/schemas/studies';
import { formatDecimals } from '@/format/criterion';

type Value = number | string | boolean;

export const BENCH_STEP_WORDS: Readonly<Record<OosBenchStep, string>> = {
  unconfirmed: 'Unconfirmed',
  remeasured: 'Re-measured',
  confirmed: 'Confirmed at the bench',
};

/** A value as the lab reads it: "4.20", "12 000 mPa·s", "grade 2", "slight", "Fail". */
export function oosValue(attr: Pick<Investigation['attribute'], 'unit' | 'decimals'>, kind: PlanAttribute['kind'] | undefined, value: Value | null | undefined): string {
  if (value === null || value === undefined) return '—';
  if (typeof value === 'boolean') return value ? 'Pass' : 'Fail';
  if (typeof value === 'number') {
    if (kind === 'graded') return `grade ${value}`;
    const n = formatDecimals(value, attr.decimals);
    return attr.unit ? `${n} ${attr.unit}` : n;
  }
  return COMPARED_LEVEL_LABELS[value as ComparedLevel] ?? value;
}

/** Where the result was taken: "45 °C oven · Week 8", or "Initial test" for a retained sample. */
export function oosWhere(i: Pick<Investigation, 'condition' | 'checkpoint'>): string {
  return i.condition ? `${i.condition} · ${i.checkpoint.label}` : `Initial test · ${i.checkpoint.label}`;
}

/** The conclusion in one line ("Confirmed", "Invalidated as a lab error; re-test 5.40 used"), or "Open". */
export function conclusionText(i: Investigation, kind: PlanAttribute['kind'] | undefined): string {
  if (i.status === 'open') return 'Open';
  if (i.conclusion === 'invalidated') return `Invalidated as a lab error; re-test ${oosValue(i.attribute, kind, i.retest?.value ?? i.valueUsed)} used`;
  return 'Confirmed';
}

/** What happened at the bench, in one line: "Re-measured 4.85 (Fail)", "Confirmed at the bench", "Unconfirmed". */
export function benchText(i: Investigation, kind: PlanAttribute['kind'] | undefined): string {
  const parts: string[] = [];
  if (i.remeasure) parts.push(`Re-measured ${oosValue(i.attribute, kind, i.remeasure.value)} (${i.remeasure.verdict === 'fail' ? 'fails again' : i.remeasure.verdict === 'pass' ? 'passes' : 'recorded'})`);
  if (i.benchStep === 'confirmed') parts.push('Confirmed at the bench');
  return parts.length ? parts.join('; ') : BENCH_STEP_WORDS.unconfirmed;
}

/** The attribute kind of an investigation's attribute (study attribute id), when the study is at hand. */
export function kindOf(attributes: readonly PlanAttribute[] | undefined, i: Pick<Investigation, 'attribute'>): PlanAttribute['kind'] | undefined {
  return attributes?.find((a) => a.id === i.attribute.id)?.kind;
}
