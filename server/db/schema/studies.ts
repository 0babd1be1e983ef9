/**
 * Attributes (what is checked), studies (the stability protocol), their
 * samples and dated checkpoints, amendments, and observations.
 */
import { sql } from 'drizzle-orm';
import {
  mysqlTable,
  varchar,
  text,
  int,
  boolean,
  date,
  datetime,
  json,
  mysqlEnum,
  double,
  uniqueIndex,
  index,
  primaryKey,
} from 'drizzle-orm/mysql-core';
import {
  ATTRIBUTE_KINDS,
  STUDY_STATUSES,
  CONDITION_ROLES,
  CHECKPOINT_STATUSES,
  CHECKPOINT_KINDS,
  AMENDMENT_KINDS,
  VERDICTS,
  type AttributeScaleStep,
  type MethodField,
  type PlanOffset,
} from '../../../shared/domain';
import type { Criterion } from '../../../shared/compute/criteria';
import { createdAt, pk, ref, labs, users } from './core';
import { batches, products } from './formulas';
import { storageConditions } from './storage';

export const attributes = mysqlTable(
  'attributes',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    /** Stable short key, e.g. "ph", "viscosity", "separation". */
    code: varchar('code', { length: 32 }).notNull(),
    name: varchar('name', { length: 80 }).notNull(),
    kind: mysqlEnum('kind', ATTRIBUTE_KINDS).notNull(),
    unit: varchar('unit', { length: 24 }),
    decimals: int('decimals').notNull().default(2),
    /** Graded attributes: the ordinal scale, 0 = best. */
    scale: json('scale').$type<AttributeScaleStep[]>(),
    /** Method details captured with each reading (pH dispersion, viscosity spindle...). */
    methodFields: json('method_fields').$type<MethodField[]>(),
    physicalMin: double('physical_min'),
    physicalMax: double('physical_max'),
    defaultCriterion: json('default_criterion').$type<Criterion>(),
    description: text('description'),
    builtIn: boolean('built_in').notNull().default(false),
    active: boolean('active').notNull().default(true),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('attributes_lab_code_uq').on(t.labId, t.code)],
);

export const studies = mysqlTable(
  'studies',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    productId: ref('product_id').notNull().references(() => products.id),
    title: varchar('title', { length: 160 }).notNull(),
    status: mysqlEnum('status', STUDY_STATUSES).notNull().default('draft'),
    /** Day 0, a date in the lab's time zone. */
    startDate: date('start_date', { mode: 'string' }).notNull(),
    responsibleId: ref('responsible_id').references(() => users.id),
    samplesPerCell: int('samples_per_cell').notNull().default(1),
    containerDescription: varchar('container_description', { length: 200 }).notNull().default(''),
    /** Grams of product one container holds (for the "product needed" figure). */
    fillGrams: double('fill_grams'),
    notes: text('notes'),
    startedAt: datetime('started_at', { mode: 'date', fsp: 3 }),
    startedBy: ref('started_by'),
    cancelledReason: text('cancelled_reason'),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
    updatedAt: datetime('updated_at', { mode: 'date', fsp: 3 })
      .notNull()
      .default(sql`CURRENT_TIMESTAMP(3)`)
      .$onUpdate(() => new Date()),
  },
  (t) => [index('studies_lab_status_idx').on(t.labId, t.status)],
);

export const studyBatches = mysqlTable(
  'study_batches',
  {
    studyId: ref('study_id').notNull().references(() => studies.id),
    batchId: ref('batch_id').notNull().references(() => batches.id),
    labId: ref('lab_id').notNull(),
  },
  (t) => [primaryKey({ columns: [t.studyId, t.batchId] })],
);

/** The members responsible for a study, in order; the first is also `studies.responsibleId` (the main person). */
export const studyResponsibles = mysqlTable(
  'study_responsibles',
  {
    studyId: ref('study_id').notNull().references(() => studies.id),
    userId: ref('user_id').notNull().references(() => users.id),
    labId: ref('lab_id').notNull(),
    position: int('position').notNull(),
  },
  (t) => [primaryKey({ columns: [t.studyId, t.userId] }), index('study_responsibles_user_idx').on(t.labId, t.userId)],
);

export const studyConditions = mysqlTable(
  'study_conditions',
  {
    id: pk(),
    labId: ref('lab_id').notNull(),
    studyId: ref('study_id').notNull().references(() => studies.id),
    conditionId: ref('condition_id').notNull().references(() => storageConditions.id),
    role: mysqlEnum('role', CONDITION_ROLES).notNull(),
    position: int('position').notNull(),
    /** The planned checkpoint offsets; dated checkpoints are made from them at start. */
    offsets: json('offsets').$type<PlanOffset[]>().notNull(),
    template: varchar('template', { length: 32 }),
    /** Each pull is paired with a same-day control reading of the same batch (off only with a reason). */
    pairControl: boolean('pair_control').notNull().default(true),
    pairingOffReason: text('pairing_off_reason'),
    endedOn: date('ended_on', { mode: 'string' }),
    endedReason: text('ended_reason'),
  },
  (t) => [uniqueIndex('study_conditions_uq').on(t.studyId, t.conditionId)],
);

export const studyAttributes = mysqlTable(
  'study_attributes',
  {
    id: pk(),
    labId: ref('lab_id').notNull(),
    studyId: ref('study_id').notNull().references(() => studies.id),
    attributeId: ref('attribute_id').notNull().references(() => attributes.id),
    position: int('position').notNull(),
    criterion: json('criterion').$type<Criterion>().notNull(),
  },
  (t) => [uniqueIndex('study_attributes_uq').on(t.studyId, t.attributeId)],
);

export const samples = mysqlTable(
  'samples',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    batchId: ref('batch_id').notNull().references(() => batches.id),
    /** The condition it is stored in; null for a batch's retained sample of the initial test. */
    studyConditionId: ref('study_condition_id').references(() => studyConditions.id),
    /** Short code printed on the label, unique in the lab. */
    code: varchar('code', { length: 12 }).notNull(),
    replicate: int('replicate').notNull().default(1),
    labelOrder: int('label_order').notNull(),
  },
  (t) => [uniqueIndex('samples_lab_code_uq').on(t.labId, t.code), index('samples_study_idx').on(t.studyId, t.studyConditionId)],
);

export const checkpoints = mysqlTable(
  'checkpoints',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    /** Null for the study's initial test, which belongs to no condition. */
    studyConditionId: ref('study_condition_id').references(() => studyConditions.id),
    /**
     * 'initial': the study's one initial (time-zero) test, every batch's baseline; 'pull': a scheduled
     * inspection of one condition; 'extra_day0': a condition's own day 0 from before the initial test
     * existed, kept as extra readings (see server/db/data-migrations.ts).
     */
    kind: mysqlEnum('kind', CHECKPOINT_KINDS).notNull().default('pull'),
    /** For a pull: the control reading (a control pull, or the initial test) it is judged against, read the same day. */
    controlCheckpointId: ref('control_checkpoint_id'),
    offsetUnit: mysqlEnum('offset_unit', ['day', 'week', 'month', 'cycle']).notNull(),
    offsetN: int('offset_n').notNull(),
    label: varchar('label', { length: 40 }).notNull(),
    dueDate: date('due_date', { mode: 'string' }).notNull(),
    windowBefore: int('window_before').notNull(),
    windowAfter: int('window_after').notNull(),
    /** open (upcoming, due or overdue by date), done, or missed. */
    status: mysqlEnum('status', CHECKPOINT_STATUSES).notNull().default('open'),
    missedReason: text('missed_reason'),
    closedAt: datetime('closed_at', { mode: 'date', fsp: 3 }),
    closedBy: ref('closed_by'),
    amendmentId: ref('amendment_id'),
    /**
     * Bumped by every save or correction at this checkpoint (settleCheckpoint). On a Galera cluster
     * row locks are local to a node, so two saves of the last two samples on two nodes could each
     * count the other's readings as missing; writing this row puts both in conflict at certification,
     * the loser is retried (server/db/client.ts) and counts again with the winner's rows in.
     */
    settles: int('settles', { unsigned: true }).notNull().default(0),
  },
  (t) => [
    index('checkpoints_lab_due_idx').on(t.labId, t.status, t.dueDate),
    index('checkpoints_study_idx').on(t.studyId, t.studyConditionId, t.dueDate),
    index('checkpoints_control_idx').on(t.controlCheckpointId),
  ],
);

export const amendments = mysqlTable(
  'amendments',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    kind: mysqlEnum('kind', AMENDMENT_KINDS).notNull(),
    reason: text('reason').notNull(),
    details: json('details'),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [index('amendments_study_idx').on(t.studyId)],
);

/** One result for one sample, checkpoint and attribute. Corrections keep history (issue: recording). */
export const observations = mysqlTable(
  'observations',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull(),
    sampleId: ref('sample_id').notNull().references(() => samples.id),
    checkpointId: ref('checkpoint_id').notNull().references(() => checkpoints.id),
    studyAttributeId: ref('study_attribute_id').notNull().references(() => studyAttributes.id),
    valueNum: double('value_num'),
    valueText: varchar('value_text', { length: 2000 }),
    valueBool: boolean('value_bool'),
    method: json('method'),
    verdict: mysqlEnum('verdict', VERDICTS).notNull(),
    notDoneReason: text('not_done_reason'),
    recordedBy: ref('recorded_by').notNull(),
    recordedAt: createdAt('recorded_at'),
    version: int('version').notNull().default(1),
    voided: boolean('voided').notNull().default(false),
    /** A save sent from a device's outbox: the id the device made (idempotency key) and a hash of what it sent. */
    clientId: varchar('client_id', { length: 36 }),
    clientHash: varchar('client_hash', { length: 64 }),
    /** When the device says it was recorded, and the server's time minus the device's when sent (seconds). */
    deviceRecordedAt: datetime('device_recorded_at', { mode: 'date', fsp: 3 }),
    deviceClockOffsetS: int('device_clock_offset_s'),
  },
  (t) => [
    uniqueIndex('observations_cell_uq').on(t.sampleId, t.checkpointId, t.studyAttributeId),
    uniqueIndex('observations_client_uq').on(t.labId, t.clientId, t.studyAttributeId),
    index('observations_checkpoint_idx').on(t.checkpointId),
    index('observations_study_idx').on(t.labId, t.studyId),
  ],
);
