/**
 * The engine's notes on a regression (shared/compute/shelf-life.ts: batches left out and why, the
 * other way of fitting separate lines, a "check the data" warning), matched to the suggestion's
 * reasons so the reasons table shows them apart from the message they are folded into. Pure; no I/O.
 */
import type { SuggestReason } from '@shared/compute/suggest';
import type { Regression, StudyAnalysis } from './types';

export interface RegressionNote {
  attribute: string;
  condition: string;
  warning: string | null;
  excluded: { batch: string; reason: string }[];
  alternative: string | null;
}

/** The notes of one variant's regressions, by attribute and condition name (as the reasons name them). */
export function regressionNotes(a: Pick<StudyAnalysis, 'regressions' | 'attributes' | 'conditions'>, variantId: number): RegressionNote[] {
  return a.regressions
    .filter((r) => r.variantId === variantId && (r.warning || r.excluded?.length || r.alternative))
    .map((r: Regression) => ({
      attribute: a.attributes.find((x) => x.id === r.studyAttributeId)?.name ?? '',
      condition: a.conditions.find((x) => x.id === r.studyConditionId)?.name ?? '',
      warning: r.warning ?? null,
      excluded: r.excluded ?? [],
      alternative: r.alternative?.message ?? null,
    }));
}

/** A reason's message without the notes shown apart, and those notes (null for other reasons). */
export function reasonWithNotes(r: Pick<SuggestReason, 'attribute' | 'condition' | 'method' | 'message'>, notes: readonly RegressionNote[]): { message: string; note: RegressionNote | null } {
  const note = r.method === 'regression' ? (notes.find((n) => n.attribute === r.attribute && n.condition === r.condition) ?? null) : null;
  if (!note) return { message: r.message, note: null };
  let message = r.message;
  const cut = (part: string) => {
    const i = message.indexOf(part);
    if (i >= 0) message = `${message.slice(0, i)}${message.slice(i + part.length)}`;
  };
  if (note.excluded.length) cut(` Left out: batch ${note.excluded.map((e) => `${e.batch} (${e.reason})`).join('; ')}.`);
  if (note.warning) cut(` ${note.warning}`);
  if (note.alternative) cut(` Beside it: ${note.alternative}`);
  return { message: message.replace(/\s{2,}/g, ' ').trim(), note };
}
