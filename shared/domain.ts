/** Domain vocabularies shared by the database schema, the API and the client. */

export const PRODUCT_TYPES = [
  'oil_in_water',
  'water_in_oil',
  'anhydrous_balm',
  'anhydrous_scrub',
  'gel',
  'oil',
  'surfactant_wash',
  'other',
] as const;
export type ProductType = (typeof PRODUCT_TYPES)[number];

export const PRODUCT_TYPE_LABELS: Record<ProductType, string> = {
  oil_in_water: 'Oil-in-water emulsion',
  water_in_oil: 'Water-in-oil emulsion',
  anhydrous_balm: 'Anhydrous balm or butter',
  anhydrous_scrub: 'Anhydrous scrub',
  gel: 'Gel',
  oil: 'Oil',
  surfactant_wash: 'Surfactant wash',
  other: 'Other',
};

/** Anhydrous products: pH is read on a dispersion in water, and water activity is low. */
export const ANHYDROUS_TYPES: readonly ProductType[] = ['anhydrous_balm', 'anhydrous_scrub', 'oil'];

export const INGREDIENT_FUNCTIONS = [
  'emulsifier',
  'preservative',
  'antioxidant',
  'fragrance',
  'colorant',
  'butter',
  'oil',
  'active',
  'humectant',
  'thickener',
  'solvent',
  'other',
] as const;
export type IngredientFunction = (typeof INGREDIENT_FUNCTIONS)[number];

export const CONDITION_KINDS = ['constant', 'cycling', 'light', 'mechanical'] as const;
export type ConditionKind = (typeof CONDITION_KINDS)[number];

export const LIGHT_SOURCES = ['daylight', 'uv_cabinet'] as const;
export type LightSource = (typeof LIGHT_SOURCES)[number];

export { ATTRIBUTE_KINDS } from './compute/criteria';
export type { Offset as PlanOffset } from './compute/schedule';

/** One step of a graded attribute's ordinal scale (0 = best). */
export interface AttributeScaleStep {
  grade: number;
  label: string;
}

/** A method detail recorded with a reading, e.g. pH "neat / 10 % dispersion / 1 % dispersion". */
export interface MethodField {
  key: string;
  label: string;
  /** Fixed choices; free text (or a number with `unit`) when absent. */
  options?: string[];
  unit?: string;
}

export const STUDY_STATUSES = ['draft', 'running', 'in_review', 'decided', 'cancelled'] as const;
export type StudyStatus = (typeof STUDY_STATUSES)[number];
export const STUDY_STATUS_LABELS: Record<StudyStatus, string> = {
  draft: 'Draft',
  running: 'Running',
  in_review: 'In review',
  decided: 'Decided',
  cancelled: 'Cancelled',
};

/** What a storage condition is for in a study. */
export const CONDITION_ROLES = ['control', 'real_time', 'accelerated', 'stress'] as const;
export type ConditionRole = (typeof CONDITION_ROLES)[number];
export const CONDITION_ROLE_LABELS: Record<ConditionRole, string> = {
  control: 'Control',
  real_time: 'Real time',
  accelerated: 'Accelerated',
  stress: 'Stress test',
};

/** open (upcoming, due or overdue by date), done, missed (window passed, with a reason), cancelled (condition ended early or study cancelled). */
/** The study's one initial test, a condition's pull, or a condition's own day 0 kept from before the initial test. */
export const CHECKPOINT_KINDS = ['initial', 'pull', 'extra_day0'] as const;
export type CheckpointKind = (typeof CHECKPOINT_KINDS)[number];

export const CHECKPOINT_STATUSES = ['open', 'done', 'missed', 'cancelled'] as const;
export type CheckpointStatus = (typeof CHECKPOINT_STATUSES)[number];

export const AMENDMENT_KINDS = ['add_checkpoint', 'end_condition', 'pair_control', 'cancel', 'other'] as const;
export type AmendmentKind = (typeof AMENDMENT_KINDS)[number];

/** Stored verdict of an observation: the evaluation's verdict, or not done (with a reason). */
export const VERDICTS = ['pass', 'fail', 'no_criterion', 'needs_baseline', 'not_done'] as const;
export type StoredVerdict = (typeof VERDICTS)[number];

export const DECISION_OUTCOMES = ['released', 'released_with_conditions', 'not_released', 'continue_testing'] as const;
export type DecisionOutcome = (typeof DECISION_OUTCOMES)[number];
export const DECISION_OUTCOME_LABELS: Record<DecisionOutcome, string> = {
  released: 'Released',
  released_with_conditions: 'Released with conditions',
  not_released: 'Not released',
  continue_testing: 'Continue testing',
};
/** What a signature means, recorded with it. */
export const SIGNATURE_MEANINGS: Record<DecisionOutcome, string> = {
  released: 'approved for release',
  released_with_conditions: 'approved for release',
  not_released: 'rejected',
  continue_testing: 'returned for more testing',
};
/** Ready phrases for release conditions. */
export const CONDITION_PHRASES = ['Protect from freezing.', 'Store below 25 °C.', 'Keep away from sunlight.'] as const;

/** Out of specification (OOS): what was done at the bench, and how the investigation ended. */
export const OOS_BENCH_STEPS = ['unconfirmed', 'remeasured', 'confirmed'] as const;
export type OosBenchStep = (typeof OOS_BENCH_STEPS)[number];
export const OOS_CONCLUSIONS = ['confirmed', 'invalidated'] as const;
export type OosConclusion = (typeof OOS_CONCLUSIONS)[number];
