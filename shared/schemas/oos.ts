/**
 * Out-of-specification (OOS) results: the bench step (re-measure, or confirm with a comment) and the
 * investigation a formulator or owner closes (what was checked, the conclusion). Request schemas and
 * the shape the API answers with.
 */
import { z } from 'zod';
import { text } from './common';
import type { AttributeKind } from '../compute/criteria';
import type { AttributeScaleStep, OosBenchStep, OosConclusion, StoredVerdict } from '../domain';

type Value = number | string | boolean;
const value = z.union([z.number().finite(), text().max(2000), z.boolean()]);
const method = z.record(text().max(32), z.union([text().max(200), z.number().finite()])).optional();
const comment = (what: string) => text().trim().min(3, `Say ${what} (at least 3 characters)`).max(2000, 'At most 2000 characters');

/** A second reading of the same sample, taken at the bench; kept beside the first. */
export const remeasureInput = z.strictObject({ value, method, comment: text().trim().max(2000, 'At most 2000 characters').optional() });
export type RemeasureInput = z.infer<typeof remeasureInput>;

/** The technician stands by the result. */
export const confirmInput = z.strictObject({ comment: comment('what you checked before confirming') });

const check = (what: string) => text().trim().min(2, `Say what was checked on the ${what}`).max(1000, 'At most 1000 characters');

export const closeInvestigationInput = z
  .strictObject({
    checks: z.strictObject({
      instrument: check('instrument'),
      method: check('method'),
      sample: check('sample'),
      calculation: check('calculation'),
    }),
    conclusion: z.enum(['confirmed', 'invalidated'], { message: 'Choose a conclusion: confirmed, or invalidated as a lab error' }),
    reason: comment('why'),
    /** Invalidated: the valid re-test that replaces the result. */
    retest: z.strictObject({ value, method }).optional(),
  })
  .superRefine((c, ctx) => {
    if (c.conclusion === 'invalidated' && !c.retest) {
      ctx.addIssue({ code: 'custom', path: ['retest', 'value'], message: 'An invalidated result needs a valid re-test' });
    }
  });
export type CloseInvestigationInput = z.infer<typeof closeInvestigationInput>;

export interface Investigation {
  id: number;
  status: 'open' | 'closed';
  benchStep: OosBenchStep;
  study: { id: number; title: string };
  sampleCode: string;
  checkpoint: { id: number; label: string };
  condition: string | null;
  attribute: { id: number; name: string; kind: AttributeKind; unit: string | null; decimals: number; scale: AttributeScaleStep[] | null };
  variant: string;
  lotCode: string;
  failed: { value: Value; message: string; by: string; at: string };
  remeasure: { value: Value; verdict: StoredVerdict; by: string; at: string } | null;
  benchComment: string | null;
  confirmed: { by: string; at: string } | null;
  checks: { instrument: string; method: string; sample: string; calculation: string } | null;
  conclusion: OosConclusion | null;
  reason: string | null;
  retest: { value: Value; verdict: StoredVerdict } | null;
  closed: { by: string; at: string } | null;
  /** The value the analysis uses: the re-test when invalidated, else the original. */
  valueUsed: Value;
}

export interface Notification {
  id: number;
  kind: string;
  text: string;
  link: string;
  createdAt: string;
  read: boolean;
}
