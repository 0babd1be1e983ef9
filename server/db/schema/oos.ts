/**
 * Out-of-specification (OOS) results: every saved reading that fails its criterion opens one
 * investigation. At the bench it is re-measured (a second reading kept beside the first) or
 * confirmed with a comment; a formulator or owner then closes it with what was checked and a
 * conclusion. Invalidating a result never deletes it: the observation is corrected to the valid
 * re-test and its original kept as a revision. In-app notifications tell the study's formulator.
 */
import { mysqlTable, varchar, text, datetime, json, mysqlEnum, index, uniqueIndex } from 'drizzle-orm/mysql-core';
import { OOS_BENCH_STEPS, OOS_CONCLUSIONS, VERDICTS } from '../../../shared/domain';
import { createdAt, pk, ref, labs, users } from './core';
import { checkpoints, observations, samples, studies, studyAttributes } from './studies';

export const oosInvestigations = mysqlTable(
  'oos_investigations',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    studyId: ref('study_id').notNull().references(() => studies.id),
    observationId: ref('observation_id').notNull().references(() => observations.id),
    sampleId: ref('sample_id').notNull().references(() => samples.id),
    checkpointId: ref('checkpoint_id').notNull().references(() => checkpoints.id),
    studyAttributeId: ref('study_attribute_id').notNull().references(() => studyAttributes.id),
    /** The failing result as saved: value, verdict message. */
    failedValue: json('failed_value').$type<string | number | boolean>().notNull(),
    failedMessage: varchar('failed_message', { length: 500 }).notNull(),
    openedBy: ref('opened_by').notNull().references(() => users.id),
    openedAt: createdAt('opened_at'),
    benchStep: mysqlEnum('bench_step', OOS_BENCH_STEPS).notNull().default('unconfirmed'),
    remeasureValue: json('remeasure_value').$type<string | number | boolean>(),
    remeasureMethod: json('remeasure_method'),
    remeasureVerdict: mysqlEnum('remeasure_verdict', VERDICTS),
    remeasuredBy: ref('remeasured_by').references(() => users.id),
    remeasuredAt: datetime('remeasured_at', { mode: 'date', fsp: 3 }),
    benchComment: text('bench_comment'),
    confirmedBy: ref('confirmed_by').references(() => users.id),
    confirmedAt: datetime('confirmed_at', { mode: 'date', fsp: 3 }),
    status: mysqlEnum('status', ['open', 'closed']).notNull().default('open'),
    /** What was checked: instrument, method, sample, calculation (one sentence each). */
    checks: json('checks').$type<{ instrument: string; method: string; sample: string; calculation: string }>(),
    conclusion: mysqlEnum('conclusion', OOS_CONCLUSIONS),
    conclusionReason: text('conclusion_reason'),
    /** Invalidated: the valid re-test that replaces the result. */
    retestValue: json('retest_value').$type<string | number | boolean>(),
    retestVerdict: mysqlEnum('retest_verdict', VERDICTS),
    closedBy: ref('closed_by').references(() => users.id),
    closedAt: datetime('closed_at', { mode: 'date', fsp: 3 }),
  },
  (t) => [uniqueIndex('oos_observation_uq').on(t.observationId), index('oos_study_idx').on(t.labId, t.studyId, t.status)],
);

/** In-app notices for one member (an OOS result in their study, ...). */
export const notifications = mysqlTable(
  'notifications',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    userId: ref('user_id').notNull().references(() => users.id),
    kind: varchar('kind', { length: 32 }).notNull(),
    text: varchar('text', { length: 500 }).notNull(),
    /** A path in the app, e.g. /studies/12?tab=investigations. */
    link: varchar('link', { length: 200 }).notNull(),
    studyId: ref('study_id'),
    createdAt: createdAt(),
    readAt: datetime('read_at', { mode: 'date', fsp: 3 }),
  },
  (t) => [index('notifications_user_idx').on(t.userId, t.readAt, t.createdAt)],
);
