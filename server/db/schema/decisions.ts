/** Submissions for review and the owner's signed release decisions. Decisions are never edited. */
import { mysqlTable, varchar, text, int, datetime, json, mysqlEnum, char, index } from 'drizzle-orm/mysql-core';
import { DECISION_OUTCOMES } from '../../../shared/domain';
import { createdAt, pk, ref, labs, users } from './core';
import { variants } from './formulas';
import { studies } from './studies';

export const submissions = mysqlTable(
  'submissions',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    summary: text('summary').notNull(),
    /** Per variant: proposed shelf life and period after opening, starting from the suggestion. */
    proposals: json('proposals').notNull(),
    openCheckpointsReason: text('open_checkpoints_reason'),
    submittedBy: ref('submitted_by').notNull().references(() => users.id),
    submittedAt: createdAt('submitted_at'),
  },
  (t) => [index('submissions_study_idx').on(t.labId, t.studyId)],
);

export const decisions = mysqlTable(
  'decisions',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    variantId: ref('variant_id').notNull().references(() => variants.id),
    submissionId: ref('submission_id'),
    outcome: mysqlEnum('outcome', DECISION_OUTCOMES).notNull(),
    conditionsText: varchar('conditions_text', { length: 1000 }),
    shelfLifeMonths: int('shelf_life_months'),
    paoMonths: int('pao_months'),
    labelRule: varchar('label_rule', { length: 32 }),
    labelText: text('label_text'),
    comment: text('comment'),
    /** The signature: who (full name at the time), when (UTC), what it means, and what data it covers. */
    signedBy: ref('signed_by').notNull().references(() => users.id),
    signerName: varchar('signer_name', { length: 120 }).notNull(),
    signedAt: datetime('signed_at', { mode: 'date', fsp: 3 }).notNull(),
    meaning: varchar('meaning', { length: 64 }).notNull(),
    dataHash: char('data_hash', { length: 64 }).notNull(),
    supersedesId: ref('supersedes_id'),
    supersedeReason: text('supersede_reason'),
    createdAt: createdAt(),
  },
  (t) => [index('decisions_study_idx').on(t.labId, t.studyId, t.variantId)],
);
