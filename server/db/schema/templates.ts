/** The lab's whole-study templates and its attribute set per product type. */
import { sql } from 'drizzle-orm';
import { mysqlTable, varchar, text, json, mysqlEnum, datetime, uniqueIndex, primaryKey } from 'drizzle-orm/mysql-core';
import { PRODUCT_TYPES } from '../../../shared/domain';
import type { TemplatePlan } from '../../../shared/schemas/templates';
import { createdAt, pk, ref, labs, users } from './core';
import { studies } from './studies';

/** A plan without product, batches or dates, saved to start new studies from. */
export const studyTemplates = mysqlTable(
  'study_templates',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    name: varchar('name', { length: 120 }).notNull(),
    description: text('description'),
    plan: json('plan').$type<TemplatePlan>().notNull(),
    /** The study it was saved from, if any. */
    sourceStudyId: ref('source_study_id').references(() => studies.id),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('study_templates_lab_name_uq').on(t.labId, t.name)],
);

/** A lab's own attribute set for a product type; without a row the default set applies (shared/attributes-starter.ts). */
export const labAttributeSets = mysqlTable(
  'lab_attribute_sets',
  {
    labId: ref('lab_id').notNull().references(() => labs.id),
    productType: mysqlEnum('product_type', PRODUCT_TYPES).notNull(),
    attributeIds: json('attribute_ids').$type<number[]>().notNull(),
    updatedBy: ref('updated_by').references(() => users.id),
    updatedAt: datetime('updated_at', { mode: 'date', fsp: 3 })
      .notNull()
      .default(sql`CURRENT_TIMESTAMP(3)`)
      .$onUpdate(() => new Date()),
  },
  (t) => [primaryKey({ columns: [t.labId, t.productType] })],
);
