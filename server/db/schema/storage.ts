/** Storage conditions (where samples live) and the chamber logs that show they held. */

import { mysqlTable, varchar, text, int, boolean, datetime, json, mysqlEnum, decimal, double, index, primaryKey } from 'drizzle-orm/mysql-core';
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
  },
  (t) => [index('chamber_logs_condition_idx').on(t.labId, t.conditionId)],
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

