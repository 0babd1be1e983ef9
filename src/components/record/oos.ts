/**
 * Out-of-specification (OOS) results on the Record screen in words: which results still wait for
 * the bench step (re-measure, or confirm with a comment), and the investigation's state in one line
 * ("Out of specification: re-measured 4.85, confirmed; investigation open"). Pure; no I/O.
 */
import type { Investigation } from '@shared/schemas/oos';
import type { ObservationView, RecordAttribute } from '@shared/schemas/records';
import { valueText } from './format';

export type OosState = NonNullable<ObservationView['investigation']>;

/** A saved failing result that nobody has re-measured or confirmed yet. */
export function needsBenchStep(item: RecordAttribute): boolean {
  const c = item.current;
  return !!c && !c.voided && c.verdict === 'fail' && c.investigation?.status === 'open' && c.investigation.benchStep === 'unconfirmed';
}

/** Re-measured but not confirmed: confirming is still offered. */
export function mayConfirm(item: RecordAttribute): boolean {
  const inv = item.current?.investigation;
  return !!inv && inv.status === 'open' && inv.benchStep === 'remeasured';
}

/** The investigation's state as one line, or '' when the value has none. */
export function oosText(item: RecordAttribute): string {
  const c = item.current;
  const inv = c?.investigation;
  if (!c || !inv) return '';
  const a = item.attribute;
  const bench: string[] = [];
  if (inv.remeasure) bench.push(`re-measured ${valueText(a, inv.remeasure.value)}`);
  if (inv.benchStep === 'confirmed') bench.push('confirmed');
  let state: string;
  if (inv.status === 'open') state = 'investigation open';
  else if (inv.conclusion === 'invalidated') state = `closed: invalidated, re-test ${valueText(a, c.value)} used`;
  else state = 'closed: result confirmed';
  return `Out of specification: ${bench.length ? `${bench.join(', ')}; ` : ''}${state}`;
}

/** The sheet's view of an investigation, from the API's full answer. */
export function toOosState(i: Investigation): OosState {
  return {
    id: i.id,
    status: i.status,
    benchStep: i.benchStep,
    remeasure: i.remeasure ? { value: i.remeasure.value, verdict: i.remeasure.verdict } : null,
    conclusion: i.conclusion,
  };
}
