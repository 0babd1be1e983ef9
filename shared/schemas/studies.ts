/**
 * Request schemas and response types of attributes, study plans, amendments,
 * checkpoints and the Bench. Used by the server to validate and by the client
 * to check forms before sending and to type responses.
 */
import { z } from 'zod';
import { calendarDate, text } from './common';
import type { Investigation } from './oos';
import { COMPARED_LEVELS, criterionError, type Criterion } from '../compute/criteria';
import type { CheckpointState, Offset } from '../compute/schedule';
import {
  AMENDMENT_KINDS,
  type CheckpointKind,
  ATTRIBUTE_KINDS,
  CONDITION_ROLES,
  type AttributeScaleStep,
  type ConditionKind,
  type ConditionRole,
  type MethodField,
  type StudyStatus,
} from '../domain';

const id = z.number({ message: 'Choose one' }).int('Must be a whole number').positive('Choose one');
/** A calendar date (the shared date schema: real, 1900-01-01..2199-12-31). */
export const localDate = calendarDate;
const reason = text().trim().min(3, 'Give a reason (at least 3 characters)').max(2000, 'At most 2000 characters');

export const offset = z.discriminatedUnion('unit', [
  z.strictObject({
    unit: z.enum(['day', 'week', 'month']),
    n: z.number().int('Whole numbers only').min(0, 'A checkpoint cannot come before day 0').max(1200, 'Too far ahead'),
  }),
  z.strictObject({
    unit: z.literal('cycle'),
    n: z.number().int('Whole numbers only').min(1, 'Cycles count from 1').max(100, 'At most 100 cycles'),
  }),
]) satisfies z.ZodType<Offset>;

const num = z.number().finite();
export const criterion = z
  .discriminatedUnion('kind', [
    z.strictObject({ kind: z.literal('range'), min: num.nullable().optional(), max: num.nullable().optional() }),
    z.strictObject({ kind: z.literal('change_abs'), max: num.positive('Must be more than 0') }),
    z.strictObject({ kind: z.literal('change_pct'), max: num.positive('Must be more than 0').max(1000) }),
    z.strictObject({ kind: z.literal('delta_e00_max'), max: num.positive('Must be more than 0').max(100, 'At most 100') }),
    z.strictObject({ kind: z.literal('worst_grade'), grade: z.number().int().min(0).max(20) }),
    z.strictObject({ kind: z.literal('worst_compared'), level: z.enum(COMPARED_LEVELS as unknown as [string, ...string[]]) }),
    z.strictObject({ kind: z.literal('must_pass') }),
    z.strictObject({ kind: z.literal('none') }),
  ])
  .superRefine((c, ctx) => {
    if (c.kind === 'range' && c.min != null && c.max != null && c.min > c.max) {
      ctx.addIssue({ code: 'custom', path: ['min'], message: 'The minimum exceeds the maximum' });
    } else if (c.kind === 'range' && c.min == null && c.max == null) {
      ctx.addIssue({ code: 'custom', path: ['max'], message: 'Give a minimum, a maximum or both' });
    } else {
      const problem = criterionError(c as Criterion);
      if (problem) ctx.addIssue({ code: 'custom', path: [], message: problem });
    }
  }) as unknown as z.ZodType<Criterion>;

// ---------------------------------------------------------------- attributes

export const attributeInput = z
  .strictObject({
    code: text()
      .trim()
      .toLowerCase()
      .regex(/^[a-z][a-z0-9_]{1,31}$/, 'Letters, digits and _ only, starting with a letter (2-32 characters)'),
    name: text().trim().min(1, 'Give a name').max(80, 'At most 80 characters'),
    kind: z.enum(ATTRIBUTE_KINDS),
    unit: text().trim().max(24, 'At most 24 characters').nullable().optional(),
    decimals: z.number().int().min(0).max(6).default(2),
    scale: z
      .array(z.strictObject({ grade: z.number().int().min(0).max(20), label: text().trim().min(1).max(80) }))
      .min(2, 'A scale needs at least two grades')
      .max(21)
      .nullable()
      .optional(),
    methodFields: z
      .array(
        z.strictObject({
          key: text().regex(/^[a-z][a-z0-9_]{0,31}$/),
          label: text().trim().min(1).max(60),
          options: z.array(text().trim().min(1).max(60)).max(20).optional(),
          unit: text().max(16).optional(),
        }),
      )
      .max(8)
      .nullable()
      .optional(),
    physicalMin: num.nullable().optional(),
    physicalMax: num.nullable().optional(),
    defaultCriterion: criterion.nullable().optional(),
    description: text().max(2000).nullable().optional(),
  })
  .superRefine((a, ctx) => {
    if (a.kind === 'graded' && !a.scale) ctx.addIssue({ code: 'custom', path: ['scale'], message: 'A graded attribute needs its scale' });
    if (a.physicalMin != null && a.physicalMax != null && a.physicalMin > a.physicalMax) {
      ctx.addIssue({ code: 'custom', path: ['physicalMin'], message: 'The minimum exceeds the maximum' });
    }
  });
export type AttributeInput = z.infer<typeof attributeInput>;

export interface Attribute {
  id: number;
  code: string;
  name: string;
  kind: (typeof ATTRIBUTE_KINDS)[number];
  unit: string | null;
  decimals: number;
  scale: AttributeScaleStep[] | null;
  methodFields: MethodField[] | null;
  physicalMin: number | null;
  physicalMax: number | null;
  defaultCriterion: Criterion | null;
  description: string | null;
  builtIn: boolean;
  active: boolean;
}

// ---------------------------------------------------------------- study plan

export const planConditionInput = z
  .strictObject({
    conditionId: id,
    role: z.enum(CONDITION_ROLES),
    template: text().max(32).nullable().optional(),
    offsets: z.array(offset).min(1, 'Add at least one checkpoint').max(60, 'At most 60 checkpoints'),
    /** Pair each pull with a same-day control reading (the default); turning it off needs a reason. */
    pairControl: z.boolean().default(true),
    pairingOffReason: text().trim().max(500, 'At most 500 characters').nullable().optional(),
  })
  .superRefine((c, ctx) => {
    if (!c.pairControl && (!c.pairingOffReason || c.pairingOffReason.length < 3)) {
      ctx.addIssue({ code: 'custom', path: ['pairingOffReason'], message: 'Say why this condition needs no same-day control reading' });
    }
  });

export const planAttributeInput = z.strictObject({
  attributeId: id,
  criterion,
});

export const studyPlanInput = z.strictObject({
  productId: id,
  title: text().trim().min(1, 'Give the study a title').max(160, 'At most 160 characters'),
  startDate: localDate,
  batchIds: z.array(id).min(1, 'Choose at least one batch').max(40, 'At most 40 batches'),
  conditions: z.array(planConditionInput).min(1, 'Choose at least one storage condition').max(20, 'At most 20 conditions'),
  attributes: z.array(planAttributeInput).min(1, 'Choose at least one attribute').max(40, 'At most 40 attributes'),
  samplesPerCell: z.number().int().min(1, 'At least 1').max(20, 'At most 20').default(1),
  containerDescription: text().trim().max(200, 'At most 200 characters').default(''),
  fillGrams: z.number().positive('Must be more than 0').max(100_000).nullable().optional(),
  /** The main person responsible (kept for older clients); the first of `responsibleIds` when both are sent. */
  responsibleId: id.nullable().optional(),
  /** Everyone responsible for the study, the main person first. */
  responsibleIds: z.array(id).max(10, 'At most 10 people').optional(),
  notes: text().max(5000, 'At most 5000 characters').nullable().optional(),
});
export type StudyPlanInput = z.infer<typeof studyPlanInput>;

export const amendmentInput = z.discriminatedUnion('kind', [
  z.strictObject({ kind: z.literal('add_checkpoint'), studyConditionId: id, offset, reason }),
  z.strictObject({ kind: z.literal('end_condition'), studyConditionId: id, endedOn: localDate, reason }),
  /** Judge a pull against another control reading of the same study and batch (e.g. read a day later). */
  z.strictObject({ kind: z.literal('pair_control'), checkpointId: id, controlCheckpointId: id, reason }),
  z.strictObject({ kind: z.literal('cancel'), reason }),
  z.strictObject({ kind: z.literal('other'), reason }),
]);
export type AmendmentInput = z.infer<typeof amendmentInput>;

export const missedInput = z.strictObject({ reason });

/** A sample code as printed on its label (4 to 12 letters and digits); lower case is read as upper. */
export const sampleCodeParams = z.strictObject({
  code: z
    .string()
    .trim()
    .toUpperCase()
    .regex(/^[0-9A-Z]{4,12}$/, 'A sample code is 4 to 12 letters and digits'),
});

export const benchQuery = z.strictObject({
  days: z.coerce.number().int().min(0).max(31).default(7),
  /** Lab-local date to look from (defaults to today in the lab's zone). */
  today: localDate.optional(),
});

// ---------------------------------------------------------------- responses

export interface StudySummary {
  id: number;
  title: string;
  status: StudyStatus;
  startDate: string;
  product: { id: number; name: string };
  responsible: { id: number; name: string } | null;
  /** Everyone responsible, the main person first. */
  responsibles: { id: number; name: string }[];
  batchCount: number;
  conditionCount: number;
  sampleCount: number;
  nextDue: string | null;
  overdueCount: number;
  /** Out-of-specification investigations still open, and of them the results not yet re-measured or confirmed. */
  openInvestigations: number;
  unconfirmed: number;
}

export interface PlanCondition {
  id: number;
  conditionId: number;
  name: string;
  kind: ConditionKind;
  location: string;
  isControl: boolean;
  setpointC: number | null;
  cycleHours: number | null;
  role: ConditionRole;
  template: string | null;
  offsets: Offset[];
  pairControl: boolean;
  pairingOffReason: string | null;
  endedOn: string | null;
  endedReason: string | null;
}

export interface PlanAttribute {
  id: number;
  attributeId: number;
  code: string;
  name: string;
  kind: Attribute['kind'];
  unit: string | null;
  /** Decimals a measured value is shown with. */
  decimals: number;
  criterion: Criterion;
}

export interface PlanBatch {
  id: number;
  lotCode: string;
  madeOn: string;
  packaging: string;
  variant: { id: number; code: string; name: string };
}

export interface PreviewCheckpoint {
  label: string;
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  warnings: string[];
  /** A pull: the day of the control reading it is judged against (the start date: the initial test), or null for none. */
  controlDate?: string | null;
  /** A control reading: the pulls it serves ("45 °C oven Week 4"), and whether it was added for them. */
  serves?: string[];
  added?: boolean;
}

export interface PlanPreview {
  sampleCount: number;
  containerCount: number;
  gramsPerBatch: number | null;
  /** The initial test: once per batch on the start date, before the samples go into their conditions. */
  initial: { label: string; dueDate: string; windowEnd: string; samples: number };
  /** Readings the plan asks for, and what one initial test per batch saves against a day 0 in every condition. */
  readings: { initial: number; pulls: number; addedControl: number; total: number; perConditionDayZero: number; saved: number };
  perCondition: { conditionId: number; name: string; checkpoints: PreviewCheckpoint[] }[];
  /** Plain-language warnings: weekend checkpoints, no control, inactive condition... */
  warnings: string[];
  /** Safety cautions for the conditions chosen (hot ovens, freezing, UV, centrifuges; shared/storage-presets.ts), then the lab's-rules line; empty when none apply. */
  cautions: string[];
}

export interface StudyCheckpoint {
  id: number;
  /** Null for the study's initial test. */
  studyConditionId: number | null;
  /** 'initial' (the study's one initial test), 'pull', or 'extra_day0' (a condition's own day 0 kept from before). */
  kind: CheckpointKind;
  /** A pull's same-day control reading (a control pull, or the initial test). */
  controlCheckpointId: number | null;
  label: string;
  offset: Offset;
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  status: 'open' | 'done' | 'missed' | 'cancelled';
  state: CheckpointState | 'cancelled';
  missedReason: string | null;
  recorded: number;
  expected: number;
}

export interface StudySample {
  id: number;
  code: string;
  /** Null for a batch's retained sample of the initial test. */
  studyConditionId: number | null;
  batchId: number;
  replicate: number;
  labelOrder: number;
}

export interface Amendment {
  id: number;
  kind: (typeof AMENDMENT_KINDS)[number];
  reason: string;
  details: unknown;
  createdBy: string | null;
  createdAt: string;
}

export interface StudyDetail {
  id: number;
  title: string;
  status: StudyStatus;
  startDate: string;
  product: { id: number; name: string; type: string };
  /** The main person responsible (the first of `responsibles`). */
  responsible: { id: number; name: string } | null;
  /** Everyone responsible for the study, the main person first. */
  responsibles: { id: number; name: string }[];
  samplesPerCell: number;
  containerDescription: string;
  fillGrams: number | null;
  notes: string | null;
  cancelledReason: string | null;
  startedAt: string | null;
  batches: PlanBatch[];
  conditions: PlanCondition[];
  attributes: PlanAttribute[];
  samples: StudySample[];
  checkpoints: StudyCheckpoint[];
  amendments: Amendment[];
  /** Every out-of-specification result of the study and its investigation. */
  investigations: Investigation[];
  today: string;
}

export interface BenchSample {
  id: number;
  code: string;
  lotCode: string;
  variantCode: string;
  recorded: number;
  /** Failing results here not yet re-measured or confirmed at the bench. */
  unconfirmed: number;
}

export interface BenchCheckpoint {
  id: number;
  kind: CheckpointKind;
  label: string;
  /** A control reading: the pulls of other conditions it is read beside ("45 °C oven Week 4"). */
  serves: string[];
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  state: CheckpointState;
  /** `mine`: the signed-in member is one of the study's responsible people. */
  study: { id: number; title: string; product: string; mine: boolean };
  attributeCount: number;
  toRecord: number;
  samples: BenchSample[];
}

export interface BenchCondition {
  /** Null for the initial test (retained samples, in no condition). */
  id: number | null;
  name: string;
  kind: ConditionKind | null;
  role: ConditionRole | null;
  setpointC: number | null;
  checkpoints: BenchCheckpoint[];
}

export interface BenchGroup {
  location: string;
  conditions: BenchCondition[];
}

export interface BenchResponse {
  today: string;
  until: string;
  counts: { overdue: number; due: number; upcoming: number };
  groups: BenchGroup[];
}

/** GET /api/samples/:code/due: the checkpoint a scanned or typed code opens (null: nothing left to record). */
export interface SampleDue {
  code: string;
  retained: boolean;
  checkpoint: { id: number; label: string; dueDate: string; state: CheckpointState | 'cancelled'; complete: boolean } | null;
}

export interface LabelSheet {
  study: { id: number; title: string; startDate: string; product: string };
  labels: {
    code: string;
    url: string;
    product: string;
    variant: string;
    lotCode: string;
    condition: string;
    startDate: string;
    replicate: number;
  }[];
}
