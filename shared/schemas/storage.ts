/**
 * Request schemas and response shapes of the Storage area (storage conditions, chamber logs).
 * Used by the server to validate and by the client to check before sending, so both give the
 * same messages.
 */
import { z } from 'zod';
import { dateTimeInRange, DATE_RANGE_MESSAGE, text } from './common';
import { CONDITION_KINDS, LIGHT_SOURCES, type ConditionKind, type LightSource } from '../domain';
import { DEFAULT_RH_TOLERANCE, DEFAULT_TOLERANCE_C } from '../compute/storage';

/** Coldest and hottest storage a lab can mean, °C (ultra-low freezer to a hot oven). */
export const MIN_STORAGE_C = -80;
export const MAX_STORAGE_C = 120;

/** A chamber-log upload may be at most this large. */
export const MAX_LOG_BYTES = 60 * 1024 * 1024;

/** Readings a logger may plausibly report, °C: beyond this it is a sensor error code. */
export const MIN_READING_C = -100;
export const MAX_READING_C = 200;

const num = (required: string) =>
  z.number({ error: (iss) => (iss.input === undefined || iss.input === null ? required : 'Enter a number') });

const temperature = (required: string) =>
  num(required)
    .min(MIN_STORAGE_C, `At least ${MIN_STORAGE_C} °C`)
    .max(MAX_STORAGE_C, `At most ${MAX_STORAGE_C} °C`);

const requiredText = (max: number, empty: string) =>
  text(empty).trim().min(1, empty).max(max, `At most ${max} characters`);

const optionalText = (max: number) =>
  text()
    .trim()
    .max(max, `At most ${max} characters`)
    .transform((s) => (s === '' ? null : s))
    .nullable()
    .optional();

const common = {
  name: requiredText(120, 'Enter a name, e.g. "45 °C oven"'),
  location: text().trim().max(120, 'At most 120 characters').optional().default(''),
  isControl: z.boolean({ error: 'Yes or no' }).optional().default(false),
  /** An in-use test: opened and used daily, as a customer would. */
  inUse: z.boolean({ error: 'Yes or no' }).optional().default(false),
  preset: optionalText(80),
  notes: optionalText(2000),
};

export const constantConditionInput = z.strictObject({
  kind: z.literal('constant'),
  ...common,
  setpointC: temperature('Enter the setpoint in °C'),
  rhPercent: num('Enter the relative humidity in %')
    .min(0, 'At least 0 % RH')
    .max(100, 'At most 100 % RH')
    .nullable()
    .optional()
    .default(null),
  toleranceC: num('Enter the tolerance in °C')
    .gt(0, 'More than 0 °C')
    .max(20, 'At most ±20 °C')
    .optional()
    .default(DEFAULT_TOLERANCE_C),
  toleranceRh: num('Enter the tolerance in % RH')
    .gt(0, 'More than 0 % RH')
    .max(30, 'At most ±30 % RH')
    .nullable()
    .optional()
    .default(null),
});

export const cyclingConditionInput = z
  .strictObject({
    kind: z.literal('cycling'),
    ...common,
    lowC: temperature('Enter the low temperature in °C'),
    highC: temperature('Enter the high temperature in °C'),
    hoursLow: num('Enter the hours at the low temperature').gt(0, 'More than 0 h').max(720, 'At most 720 h'),
    hoursHigh: num('Enter the hours at the high temperature').gt(0, 'More than 0 h').max(720, 'At most 720 h'),
  })
  .refine((v) => v.lowC < v.highC, { path: ['highC'], message: 'The high temperature must be above the low one' });

export const lightConditionInput = z.strictObject({
  kind: z.literal('light'),
  ...common,
  lightSource: z.enum(LIGHT_SOURCES, { error: 'Choose window daylight or UV cabinet' }),
});

export const mechanicalConditionInput = z.strictObject({
  kind: z.literal('mechanical'),
  ...common,
  rpm: num('Enter the speed in rpm')
    .int('Whole revolutions per minute')
    .min(1, 'At least 1 rpm')
    .max(100_000, 'At most 100 000 rpm'),
  minutes: num('Enter the run time in minutes').gt(0, 'More than 0 min').max(1440, 'At most 1440 min'),
  radiusCm: num('Enter the rotor radius in cm').gt(0, 'More than 0 cm').max(100, 'At most 100 cm'),
});

/** A storage condition as created or replaced; the fields depend on `kind`. */
export const conditionInput = z.discriminatedUnion(
  'kind',
  [constantConditionInput, cyclingConditionInput, lightConditionInput, mechanicalConditionInput],
  { error: `Choose the kind: ${CONDITION_KINDS.join(', ')}` },
);
export type ConditionInput = z.input<typeof conditionInput>;
export type ConditionValues = z.output<typeof conditionInput>;

/** Deactivating or reactivating a condition. */
export const conditionActiveInput = z.strictObject({
  active: z.boolean({ error: 'Yes or no' }),
  reason: optionalText(500),
});
export type ConditionActiveInput = z.input<typeof conditionActiveInput>;

/** Form fields sent with a chamber-log CSV. */
export const chamberLogUploadFields = z.strictObject({
  unit: z.enum(['C', 'F'], { error: 'Choose °C or °F' }).optional(),
  dateOrder: z.enum(['DMY', 'MDY'], { error: 'Choose DD/MM/YYYY (DMY) or MM/DD/YYYY (MDY)' }).optional(),
  /** Made by the client once per file: sending the same upload again returns the log it already made. */
  importId: z
    .string()
    .regex(/^[A-Za-z0-9-]{8,36}$/, { error: '8 to 36 letters, digits or dashes (a UUID)' })
    .optional(),
});
export type ChamberLogUploadFields = z.infer<typeof chamberLogUploadFields>;

/** Query of the period routes: ISO 8601 instants, or lab-local "YYYY-MM-DDTHH:mm" without offset. */
const periodBound = text().max(40, 'At most 40 characters').refine(dateTimeInRange, DATE_RANGE_MESSAGE);
export const periodQuery = z.strictObject({
  from: periodBound.optional(),
  to: periodBound.optional(),
  resolution: z.enum(['full', 'chart'], { error: 'full or chart' }).optional(),
});

// ---------------------------------------------------------------- response shapes

export interface ExcursionOut {
  start: string;
  end: string;
  hours: number;
  ongoing: boolean;
  /** °C for temperature, % for RH: the value furthest from the setpoint. */
  peak: number;
}

/** How a log was judged. */
export interface ToleranceBand {
  /** 'setpoint': setpoint ± tolerance; 'cycle': below low - tolerance or above high + tolerance; 'none': not judged. */
  rule: 'setpoint' | 'cycle' | 'none';
  setpointC: number | null;
  toleranceC: number | null;
  lowC: number | null;
  highC: number | null;
  rhSetpoint: number | null;
  rhTolerance: number | null;
}

/** Most excursions listed in a summary (the count is always complete). */
export const MAX_LISTED_EXCURSIONS = 500;

export interface LogSummary {
  count: number;
  first: string | null;
  last: string | null;
  minC: number | null;
  maxC: number | null;
  meanC: number | null;
  /** Mean kinetic temperature, °C (ΔH/R = 10 000 K). */
  mktC: number | null;
  spanHours: number;
  largestGapHours: number;
  /** Null when the condition has no tolerance to judge against. */
  hoursOutOfTolerance: number | null;
  excursionCount: number;
  excursions: ExcursionOut[];
  rh: {
    count: number;
    min: number;
    max: number;
    mean: number;
    hoursOutOfTolerance: number | null;
    excursionCount: number;
    excursions: ExcursionOut[];
  } | null;
  band: ToleranceBand;
  /** How the file was read (whole-log summaries only). */
  source?: LogSource;
}

/** How the file was read, kept with the log. */
export interface LogSource {
  encoding: 'utf8' | 'latin1';
  delimiter: ',' | ';' | 'tab';
  headers: string[];
  unit: 'C' | 'F';
  unitFrom: 'header' | 'form';
  dateOrder: 'DMY' | 'MDY';
  dateOrderFrom: 'file' | 'form' | 'default';
  timeZone: string;
}

export interface ChamberLogMeta {
  id: number;
  conditionId: number;
  fileName: string;
  sourceUnit: 'C' | 'F';
  readingCount: number;
  firstAt: string;
  lastAt: string;
  uploadedAt: string;
  uploadedBy: string | null;
}

/** A log in lists: the headline figures of its stored summary. */
export interface ChamberLogListItem extends ChamberLogMeta {
  minC: number | null;
  maxC: number | null;
  meanC: number | null;
  mktC: number | null;
  hoursOutOfTolerance: number | null;
  excursionCount: number;
  rhMean: number | null;
  rhHoursOutOfTolerance: number | null;
  band: ToleranceBand;
}

/** One log with its whole-log summary and its condition. */
export interface ChamberLogDetail extends ChamberLogMeta {
  summary: LogSummary;
  condition: { id: number; name: string; kind: ConditionKind; location: string; active: boolean };
}

export interface StorageCondition {
  id: number;
  name: string;
  kind: ConditionKind;
  location: string;
  isControl: boolean;
  inUse: boolean;
  preset: string | null;
  notes: string | null;
  active: boolean;
  createdAt: string;
  setpointC: number | null;
  rhPercent: number | null;
  toleranceC: number | null;
  toleranceRh: number | null;
  lowC: number | null;
  highC: number | null;
  hoursLow: number | null;
  hoursHigh: number | null;
  lightSource: LightSource | null;
  rpm: number | null;
  minutes: number | null;
  radiusCm: number | null;
  /** Relative centrifugal force, × g, computed from RCF = 1.118e-5 × r × rpm² (mechanical only). */
  rcf: number | null;
  logCount: number;
  latestLog: ChamberLogListItem | null;
}

export interface SeriesOut {
  /** [epoch ms, value | null] pairs; null breaks the line at a gap in the log. */
  temp: [number, number | null][];
  rh: [number, number | null][] | null;
  /** True when the points are a min/max reduction of more readings. */
  reduced: boolean;
  readingCount: number;
}
