/** The history of each observation (corrections and voids) and photos of samples at checkpoints. */
import { mysqlTable, varchar, text, int, boolean, datetime, json, mysqlEnum, double, index, uniqueIndex } from 'drizzle-orm/mysql-core';
import { VERDICTS } from '../../../shared/domain';
import { createdAt, pk, ref, labs, users } from './core';
import { checkpoints, observations, samples, studies } from './studies';

/** Every earlier version of an observation, kept when it is corrected or voided. Never updated. */
export const observationRevisions = mysqlTable(
  'observation_revisions',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    observationId: ref('observation_id').notNull().references(() => observations.id),
    /** The version this row preserves (the observation's version before the change). */
    version: int('version').notNull(),
    valueNum: double('value_num'),
    valueText: varchar('value_text', { length: 2000 }),
    valueBool: boolean('value_bool'),
    method: json('method'),
    verdict: mysqlEnum('verdict', VERDICTS).notNull(),
    notDoneReason: text('not_done_reason'),
    recordedBy: ref('recorded_by').notNull(),
    recordedAt: datetime('recorded_at', { mode: 'date', fsp: 3 }).notNull(),
    /** What replaced it, who did it, when and why. */
    change: mysqlEnum('change', ['correction', 'void', 'invalidated']).notNull(),
    changedBy: ref('changed_by').notNull().references(() => users.id),
    changedAt: createdAt('changed_at'),
    reason: text('reason').notNull(),
  },
  (t) => [index('revisions_observation_idx').on(t.observationId, t.version)],
);

export const photos = mysqlTable(
  'photos',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    sampleId: ref('sample_id').notNull().references(() => samples.id),
    checkpointId: ref('checkpoint_id').notNull().references(() => checkpoints.id),
    /** Server-generated file names under the uploads folder, outside the web root. */
    storedName: varchar('stored_name', { length: 80 }).notNull(),
    thumbName: varchar('thumb_name', { length: 80 }).notNull(),
    mime: mysqlEnum('mime', ['image/jpeg', 'image/png', 'image/webp']).notNull(),
    bytes: int('bytes').notNull(),
    width: int('width').notNull(),
    height: int('height').notNull(),
    originalName: varchar('original_name', { length: 200 }).notNull(),
    caption: varchar('caption', { length: 200 }),
    uploadedBy: ref('uploaded_by').notNull().references(() => users.id),
    uploadedAt: createdAt('uploaded_at'),
    /** A photo sent from a device's outbox: the id the device made (idempotency key). */
    clientId: varchar('client_id', { length: 36 }),
  },
  (t) => [index('photos_sample_idx').on(t.labId, t.sampleId, t.checkpointId), index('photos_study_idx').on(t.studyId), uniqueIndex('photos_client_uq').on(t.labId, t.clientId)],
);
