/** Storage conditions (where samples live) and the chamber logs that show they held. */

import { mysqlTable, varchar, text, int, boolean, datetime, json, mysqlEnum, decimal, double, index, primaryKey, uniqueIndex } from 'drizzle-orm/mysql-core';
import { CONDITION_KINDS, LIGHT_SOURCES } from '../../../shared/domain';
import { createdAt, pk, ref, labs, users } from './core';

export const storageConditions = mysqlTable(
  'storage_conditions',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    name: varchar('name', { length: 120 }).notNull(),
    kind: mysqlEnum('kind', CONDITION_KINDS).notNull(),
    location: varchar('location', { length: 120 }).notNull().default(''),
    isControl: boolean('is_control').notNull().default(false),
    /** An in-use test: the pack opened and used daily, as a customer would (feeds the period after opening). */
    inUse: boolean('in_use').notNull().default(false),
    /** Name of the preset it came from, e.g. "ICH Q1A(R2) long term 25 °C / 60 % RH". */
    preset: varchar('preset', { length: 80 }),
    // constant
    setpointC: decimal('setpoint_c', { precision: 5, scale: 2, mode: 'number' }),
    rhPercent: decimal('rh_percent', { precision: 5, scale: 2, mode: 'number' }),
    toleranceC: decimal('tolerance_c', { precision: 4, scale: 2, mode: 'number' }),
    toleranceRh: decimal('tolerance_rh', { precision: 4, scale: 2, mode: 'number' }),
    // cycling
    lowC: decimal('low_c', { precision: 5, scale: 2, mode: 'number' }),
    highC: decimal('high_c', { precision: 5, scale: 2, mode: 'number' }),
    hoursLow: decimal('hours_low', { precision: 6, scale: 2, mode: 'number' }),
    hoursHigh: decimal('hours_high', { precision: 6, scale: 2, mode: 'number' }),
    // light
    lightSource: mysqlEnum('light_source', LIGHT_SOURCES),
    // mechanical (centrifuge)
    rpm: int('rpm'),
    minutes: decimal('minutes', { precision: 6, scale: 2, mode: 'number' }),
    radiusCm: decimal('radius_cm', { precision: 5, scale: 2, mode: 'number' }),
    notes: text('notes'),
    active: boolean('active').notNull().default(true),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [index('conditions_lab_idx').on(t.labId)],
);

export const chamberLogs = mysqlTable(
  'chamber_logs',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    conditionId: ref('condition_id').notNull().references(() => storageConditions.id),
    fileName: varchar('file_name', { length: 200 }).notNull(),
    sourceUnit: mysqlEnum('source_unit', ['C', 'F']).notNull(),
    readingCount: int('reading_count').notNull(),
    firstAt: datetime('first_at', { mode: 'date', fsp: 3 }).notNull(),
    lastAt: datetime('last_at', { mode: 'date', fsp: 3 }).notNull(),
    /** Whole-log summary computed while the file streamed in. */
    summary: json('summary').notNull(),
    uploadedBy: ref('uploaded_by').references(() => users.id),
    uploadedAt: createdAt('uploaded_at'),
    /**
     * The upload that made this log: readings are committed in chunks under it (a Galera cluster refuses
     * huge write sets), the original CSV is stored as chamber-logs/<lab>/<import_id>.csv, and a retry
     * with the same id finds the log instead of making a second one. Null for logs from before.
     */
    importId: varchar('import_id', { length: 36 }),
    /** 'importing' while chunks are being committed: such a log is shown nowhere. */
    importState: mysqlEnum('import_state', ['importing', 'complete']).notNull().default('complete'),
  },
  (t) => [index('chamber_logs_condition_idx').on(t.labId, t.conditionId), uniqueIndex('chamber_logs_import_uq').on(t.labId, t.importId)],
);

export const chamberReadings = mysqlTable(
  'chamber_readings',
  {
    logId: ref('log_id').notNull().references(() => chamberLogs.id),
    seq: int('seq').notNull(),
    labId: ref('lab_id').notNull(),
    at: datetime('at', { mode: 'date', fsp: 3 }).notNull(),
    tempC: double('temp_c').notNull(),
    rh: double('rh'),
  },
  (t) => [primaryKey({ columns: [t.logId, t.seq] }), index('chamber_readings_log_at_idx').on(t.logId, t.at)],
);


/**
 * Hourly roll-ups of a chamber log, written with its upload (server/services/chamber-logs.ts), so a
 * period summary reads at most 24 x 366 rows plus the raw readings of its partial edge hours and of
 * hours holding an out-of-tolerance reading. `arrhenius_sum` is Σ exp(-ΔH/(R·T)) with ΔH/R = 10 000 K
 * (mean kinetic temperature, Haynes 1971 as in USP <1160>); `t_out`/`rh_out` count readings outside
 * the band stored with the log.
 */
export const chamberRollups = mysqlTable(
  'chamber_rollups',
  {
    logId: ref('log_id').notNull().references(() => chamberLogs.id),
    hourStart: datetime('hour_start', { mode: 'date', fsp: 3 }).notNull(),
    labId: ref('lab_id').notNull(),
    n: int('n').notNull(),
    seqFirst: int('seq_first').notNull(),
    seqLast: int('seq_last').notNull(),
    firstAt: datetime('first_at', { mode: 'date', fsp: 3 }).notNull(),
    lastAt: datetime('last_at', { mode: 'date', fsp: 3 }).notNull(),
    /** Longest time between consecutive readings within the hour, ms. */
    maxGapMs: int('max_gap_ms').notNull(),
    tSum: double('t_sum').notNull(),
    tMin: double('t_min').notNull(),
    tMax: double('t_max').notNull(),
    arrheniusSum: double('arrhenius_sum').notNull(),
    tOut: int('t_out').notNull(),
    rhN: int('rh_n').notNull(),
    rhSum: double('rh_sum').notNull(),
    rhMin: double('rh_min'),
    rhMax: double('rh_max'),
    rhOut: int('rh_out').notNull(),
  },
  (t) => [primaryKey({ columns: [t.logId, t.hourStart] })],
);
