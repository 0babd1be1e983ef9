/** The product file: each variant's microbial-risk assessment and the documents behind a release. */
import { sql } from 'drizzle-orm';
import { boolean, char, date, datetime, index, int, json, mysqlEnum, mysqlTable, text, uniqueIndex, varchar } from 'drizzle-orm/mysql-core';
import { DOCUMENT_KINDS, ISO11930_CRITERIA, type OrganismResult, type RiskEntered, type RiskSnapshot } from '../../../shared/schemas/product-file';
import { createdAt, labs, pk, ref, users } from './core';
import { variants } from './formulas';
import { studies } from './studies';

/** One per variant: what was entered, the factor inputs it was made with (to tell when it is out of date) and the outcome. */
export const riskAssessments = mysqlTable(
  'risk_assessments',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    variantId: ref('variant_id').notNull().references(() => variants.id),
    entered: json('entered').$type<RiskEntered>().notNull(),
    factors: json('factors').$type<RiskSnapshot>().notNull(),
    lowRisk: boolean('low_risk').notNull(),
    outcomeText: text('outcome_text').notNull(),
    suggestedPaoMonths: int('suggested_pao_months'),
    /** The period after opening the formulator settled on; the owner still signs it. */
    decidedPaoMonths: int('decided_pao_months'),
    updatedBy: ref('updated_by').notNull().references(() => users.id),
    updatedAt: datetime('updated_at', { mode: 'date', fsp: 3 }).notNull().default(sql`CURRENT_TIMESTAMP(3)`),
  },
  (t) => [uniqueIndex('risk_assessments_variant_uq').on(t.variantId), index('risk_assessments_lab_idx').on(t.labId)],
);

/** A document attached to a variant or to a study (exactly one of the two). Files go through the file store. */
export const productDocuments = mysqlTable(
  'product_documents',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    variantId: ref('variant_id').references(() => variants.id),
    studyId: ref('study_id').references(() => studies.id),
    kind: mysqlEnum('kind', DOCUMENT_KINDS).notNull(),
    title: varchar('title', { length: 160 }).notNull(),
    documentDate: date('document_date', { mode: 'string' }).notNull(),
    author: varchar('author', { length: 120 }).notNull(),
    summary: text('summary').notNull(),
    /** Challenge tests: the result per organism and the ISO 11930 criteria met. */
    organisms: json('organisms').$type<OrganismResult[]>(),
    criteria: mysqlEnum('criteria', ISO11930_CRITERIA),
    storedName: varchar('stored_name', { length: 80 }).notNull(),
    mime: varchar('mime', { length: 40 }).notNull(),
    bytes: int('bytes').notNull(),
    sha256: char('sha256', { length: 64 }).notNull(),
    originalName: varchar('original_name', { length: 200 }).notNull(),
    uploadedBy: ref('uploaded_by').notNull().references(() => users.id),
    uploadedAt: createdAt('uploaded_at'),
  },
  (t) => [index('product_documents_variant_idx').on(t.labId, t.variantId), index('product_documents_study_idx').on(t.labId, t.studyId)],
);
