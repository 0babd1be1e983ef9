/**
 * Whole-study templates (a plan without product, batches or dates) and the lab's attribute set per
 * product type: request schemas and response types.
 */
import { z } from 'zod';
import { text } from './common';
import { planAttributeInput, planConditionInput } from './studies';
import { PRODUCT_TYPES, type ProductType } from '../domain';

const id = z.number({ message: 'Choose one' }).int('Must be a whole number').positive('Choose one');

/** What a template keeps of a plan: conditions with roles, offsets and pairing, attributes with criteria, samples and container. */
export const templatePlan = z.strictObject({
  conditions: z.array(planConditionInput).min(1, 'Choose at least one storage condition').max(20, 'At most 20 conditions'),
  attributes: z.array(planAttributeInput).min(1, 'Choose at least one attribute').max(40, 'At most 40 attributes'),
  samplesPerCell: z.number().int().min(1, 'At least 1').max(20, 'At most 20').default(1),
  containerDescription: text().trim().max(200, 'At most 200 characters').default(''),
  fillGrams: z.number().positive('Must be more than 0').max(100_000).nullable().optional(),
});
export type TemplatePlan = z.infer<typeof templatePlan>;

/** Save a template from a plan being built, or from a study's plan (exactly one of the two). */
export const studyTemplateInput = z
  .strictObject({
    name: text().trim().min(1, 'Give the template a name').max(120, 'At most 120 characters'),
    description: text().trim().max(1000, 'At most 1000 characters').nullable().optional(),
    plan: templatePlan.optional(),
    studyId: id.optional(),
  })
  .superRefine((v, ctx) => {
    if ((v.plan == null) === (v.studyId == null)) {
      ctx.addIssue({ code: 'custom', path: ['plan'], message: 'Send either the plan or the study to save as a template' });
    }
  });
export type StudyTemplateInput = z.infer<typeof studyTemplateInput>;

export interface StudyTemplateSummary {
  id: number;
  name: string;
  description: string | null;
  /** Condition names with their checkpoint count, e.g. "45 °C oven (5)". */
  conditions: string[];
  attributeCount: number;
  samplesPerCell: number;
  containerDescription: string;
  /** The study it was saved from, if any. */
  source: { id: number; title: string } | null;
  createdBy: string | null;
  createdAt: string;
}

/**
 * A plan to start from: a template's or a previous study's plan, without dates or batches (the
 * formulator picks batches and a start date). The product is the study's when copied from one.
 */
export interface PlanDraft {
  productId: number | null;
  conditions: z.infer<typeof planConditionInput>[];
  attributes: z.infer<typeof planAttributeInput>[];
  samplesPerCell: number;
  containerDescription: string;
  fillGrams: number | null;
  notes: string | null;
}

export interface PlanDraftResponse {
  draft: PlanDraft;
  from: { kind: 'template' | 'study'; id: number; name: string };
  /** What the source had that this lab can no longer use (a retired condition or attribute), in words. */
  leftOut: string[];
}

// ---------------------------------------------------------------- attribute sets per product type

export const attributeSetInput = z.strictObject({
  attributeIds: z.array(id).min(1, 'Choose at least one attribute').max(40, 'At most 40 attributes'),
});

export const productTypeParam = z.enum(PRODUCT_TYPES, { error: 'No such product type' });

export interface AttributeSet {
  productType: ProductType;
  label: string;
  /** The lab's attributes in this set (active ones only), in library order. */
  attributeIds: number[];
  /** True when the lab changed the set; false: the default set. */
  edited: boolean;
}
