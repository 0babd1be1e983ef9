/** Submitting a study for review, the owner's signed decision, and superseding one. */
import { z } from 'zod';
import { text } from './common';
import { DECISION_OUTCOMES, type DecisionOutcome } from '../domain';
import { offset } from './studies';

const months = (what: string) =>
  z
    .number({ message: `Give the ${what} in whole months` })
    .int('Whole months only')
    .min(1, `The ${what} must be at least 1 month`)
    .max(120, `The ${what} cannot exceed 120 months`);

export const submitInput = z.strictObject({
  summary: text().trim().min(10, 'Write a short summary for the reviewer (at least 10 characters)').max(5000, 'At most 5000 characters'),
  proposals: z
    .array(
      z.strictObject({
        variantId: z.number().int().positive(),
        shelfLifeMonths: months('shelf life').nullable(),
        paoMonths: months('period after opening').nullable().optional(),
      }),
    )
    .min(1, 'Propose a shelf life for each variant'),
  /** Required when checkpoints are still open: why the study ends early. */
  openCheckpointsReason: text().trim().min(3, 'Give a reason (at least 3 characters)').max(2000).optional(),
});
export type SubmitInput = z.infer<typeof submitInput>;

/** "1 checkpoint is still open", "3 checkpoints are still open": the submit form's label and the refusal alike. */
export function openCheckpointsText(n: number): string {
  return `${n} ${n === 1 ? 'checkpoint is' : 'checkpoints are'} still open`;
}

/** The refusal beside the reason field, from the form before sending and from the server. */
export function openCheckpointsProblem(n: number): string {
  return `${openCheckpointsText(n)}: give a reason to end early`;
}

export const decisionInput = z
  .strictObject({
    variantId: z.number().int().positive(),
    outcome: z.enum(DECISION_OUTCOMES),
    conditionsText: text().trim().max(1000, 'At most 1000 characters').optional(),
    shelfLifeMonths: months('shelf life').nullable().optional(),
    paoMonths: months('period after opening').nullable().optional(),
    comment: text().trim().max(5000, 'At most 5000 characters').optional(),
    /** Continue testing: the checkpoints to add, per study condition. */
    newCheckpoints: z.array(z.strictObject({ studyConditionId: z.number().int().positive(), offset })).max(40).optional(),
    /** Signing asks for the owner's password again. */
    password: z.string().min(1, 'Enter your password to sign').max(200),
    supersedesId: z.number().int().positive().optional(),
    supersedeReason: text().trim().min(3, 'Give a reason (at least 3 characters)').max(2000).optional(),
  })
  .superRefine((d, ctx) => {
    const releasing = d.outcome === 'released' || d.outcome === 'released_with_conditions';
    if (releasing && d.shelfLifeMonths == null) ctx.addIssue({ code: 'custom', path: ['shelfLifeMonths'], message: 'A release needs a shelf life' });
    if (d.outcome === 'released_with_conditions' && !d.conditionsText) ctx.addIssue({ code: 'custom', path: ['conditionsText'], message: 'Write the conditions of release' });
    if (d.outcome === 'not_released' && !d.comment) ctx.addIssue({ code: 'custom', path: ['comment'], message: 'Say why the variant is not released' });
    if (d.outcome === 'continue_testing' && !d.newCheckpoints?.length) ctx.addIssue({ code: 'custom', path: ['newCheckpoints'], message: 'Add at least one checkpoint to continue testing' });
    if (d.supersedesId && !d.supersedeReason) ctx.addIssue({ code: 'custom', path: ['supersedeReason'], message: 'Say why this decision replaces the earlier one' });
  });
export type DecisionInput = z.infer<typeof decisionInput>;

/**
 * A release whose shelf life is longer than the analysis suggests for the variant needs a
 * comment saying why. The message (shown beside the comment), or null when none is needed.
 * The server checks it at signing against the suggestion it computes then.
 */
export function longerThanSuggested(d: { outcome: DecisionOutcome | null; shelfLifeMonths?: number | null }, suggestedMonths: number | null | undefined): string | null {
  const releasing = d.outcome === 'released' || d.outcome === 'released_with_conditions';
  if (!releasing || d.shelfLifeMonths == null || suggestedMonths == null || d.shelfLifeMonths <= suggestedMonths) return null;
  return `Longer than the data suggest (${suggestedMonths} ${suggestedMonths === 1 ? 'month' : 'months'}): say why in the comment`;
}

export interface DecisionView {
  id: number;
  /** Its number within the study: 1 for the first decision signed on it. */
  no: number;
  /** The number within the study of the decision it replaces. */
  supersedesNo: number | null;
  variantId: number;
  variant: string;
  outcome: DecisionOutcome;
  conditionsText: string | null;
  shelfLifeMonths: number | null;
  paoMonths: number | null;
  labelRule: string | null;
  labelText: string | null;
  comment: string | null;
  signerName: string;
  signedAt: string;
  meaning: string;
  dataHash: string;
  /** False when the study's data changed after signing. */
  coversCurrentData: boolean;
  supersedesId: number | null;
  supersedeReason: string | null;
  supersededById: number | null;
}

export interface SubmissionView {
  id: number;
  summary: string;
  proposals: { variantId: number; shelfLifeMonths: number | null; paoMonths?: number | null }[];
  openCheckpointsReason: string | null;
  submittedBy: string;
  submittedAt: string;
}

export interface ReviewQueueItem {
  studyId: number;
  title: string;
  product: string;
  submittedBy: string;
  submittedAt: string;
  variants: number;
  decided: number;
}

/** A decided study on the Reviews page: the decision in force per variant, most recent decision first. */
export interface DecidedStudyItem {
  studyId: number;
  title: string;
  product: string;
  /** When the latest decision in force was signed (UTC ISO), and by whom. */
  decidedAt: string;
  decidedBy: string;
  variants: {
    variantId: number;
    code: string;
    name: string;
    outcome: DecisionOutcome;
    shelfLifeMonths: number | null;
    paoMonths: number | null;
    conditionsText: string | null;
  }[];
}
