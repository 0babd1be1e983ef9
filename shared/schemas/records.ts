/**
 * Recording at the bench: what the Record screen reads and sends, corrections,
 * voids, photos, bulk import and the audit trail. Shared by client and server.
 */
import { z } from 'zod';
import { calendarDate, text } from './common';
import type { Criterion, Evaluation } from '../compute/criteria';
import type { ConditionKind, ConditionRole, LightSource, StoredVerdict } from '../domain';
import type { Attribute, StudyCheckpoint } from './studies';

const reason = text().trim().min(3, 'Give a reason (at least 3 characters)').max(2000, 'At most 2000 characters');

/** A value as typed: number (measured, graded), level (compared), boolean (pass/fail), text (note). */
export const observedValue = z.union([
  z.number().finite('Must be a number'),
  z.boolean(),
  text().trim().min(1, 'Enter a value').max(2000, 'At most 2000 characters'),
]);

export const methodValues = z.record(text().max(32), z.union([text().max(60), z.number().finite()])).refine(
  (m) => Object.keys(m).length <= 8,
  'At most 8 method details',
);

export const recordEntry = z
  .strictObject({
    studyAttributeId: z.number().int().positive(),
    value: observedValue.nullable().optional(),
    method: methodValues.optional(),
    /** Set instead of a value when the check could not be done. */
    notDoneReason: reason.optional(),
  })
  .superRefine((e, ctx) => {
    const hasValue = e.value !== undefined && e.value !== null;
    if (!hasValue && !e.notDoneReason) ctx.addIssue({ code: 'custom', path: ['value'], message: 'Enter a value, or mark it not done with a reason' });
    if (hasValue && e.notDoneReason) ctx.addIssue({ code: 'custom', path: ['notDoneReason'], message: 'Either a value or a reason, not both' });
  });
export type RecordEntry = z.infer<typeof recordEntry>;

/** A time the device stamped: ISO 8601 with a zone, between 2000 and 2199. */
export const deviceTime = z.iso
  .datetime({ offset: true, message: 'A date and time with its zone (ISO 8601)' })
  .refine((v) => {
    const y = new Date(v).getUTCFullYear();
    return y >= 2000 && y <= 2199;
  }, 'Between the years 2000 and 2199');

export const recordInput = z.strictObject({
  entries: z.array(recordEntry).min(1, 'Nothing to save').max(60),
  /** Lets a formulator record before the window opens. */
  allowEarly: z.boolean().optional(),
  /** A save from the device's outbox: its id (made on the device, the idempotency key), when it was recorded and when sent, by the device's clock. */
  clientId: z.uuid('A UUID made on the device').optional(),
  deviceRecordedAt: deviceTime.optional(),
  deviceSentAt: deviceTime.optional(),
});
export type RecordInput = z.infer<typeof recordInput>;

export const correctionInput = z.strictObject({
  value: observedValue,
  method: methodValues.optional(),
  reason,
});
export type CorrectionInput = z.infer<typeof correctionInput>;

export const voidInput = z.strictObject({ reason });

export const auditQuery = z.strictObject({
  studyId: z.coerce.number().int().positive().optional(),
  userId: z.coerce.number().int().positive().optional(),
  from: calendarDate.optional(),
  to: calendarDate.optional(),
  page: z.coerce.number().int().min(1).max(100_000).default(1),
});

// ---------------------------------------------------------------- responses

export interface ObservationView {
  id: number;
  value: number | string | boolean | null;
  method: Record<string, string | number> | null;
  verdict: StoredVerdict;
  message: string;
  notDoneReason: string | null;
  recordedBy: string;
  recordedAt: string;
  version: number;
  voided: boolean;
  /** Saved from a device's outbox: when the device recorded it, and whether its clock was off by more than 10 minutes. */
  device?: DeviceTimes | null;
  /** Out of specification: the investigation this failing reading opened. */
  investigation: {
    id: number;
    status: 'open' | 'closed';
    benchStep: 'unconfirmed' | 'remeasured' | 'confirmed';
    remeasure: { value: number | string | boolean; verdict: StoredVerdict } | null;
    conclusion: 'confirmed' | 'invalidated' | null;
  } | null;
}

/** A reading saved from a device's outbox: the device's time beside the server's (`recordedAt`). */
export interface DeviceTimes {
  recordedAt: string;
  /** Server time minus device time when it was sent, in seconds. */
  clockOffsetS: number | null;
  /** The device clock was off by more than 10 minutes. */
  clockSkewed: boolean;
}

/** The answer to a save: the sheet, and whether this was a resend of a save already kept (nothing changed). */
export interface RecordSaveResponse {
  sheet: RecordSheet;
  replayed: boolean;
}

export interface ReferenceValue {
  value: number | string | boolean;
  label: string;
  sampleCode?: string;
  /** A control value: read the same day as this pull (false: the latest earlier one, for a pull without a paired control reading). */
  sameDay?: boolean;
  /** The baseline and the previous reading: the method details used then (pH neat or a dispersion, spindle and speed), offered again. */
  method?: Record<string, string | number> | null;
}

export interface RecordAttribute {
  studyAttributeId: number;
  attribute: Attribute;
  criterion: Criterion;
  /** The baseline: the reading of this sample's batch at the initial test (same replicate first). */
  baseline: ReferenceValue | null;
  previous: ReferenceValue | null;
  /**
   * For compared attributes: the control sample's value read the same day (the pull's paired control
   * reading), else, for a pull without one, the latest control value up to this checkpoint's window
   * end (sameDay false). Always null on the control itself and at the initial test.
   */
  control: ReferenceValue | null;
  current: ObservationView | null;
}

export interface PhotoView {
  id: number;
  /** The display copy: at most 2048 px, re-encoded without EXIF/GPS or other metadata. */
  url: string;
  thumbUrl: string;
  /** The file as uploaded, sent as a download (attachment). */
  originalUrl: string;
  width: number;
  height: number;
  caption: string | null;
  uploadedBy: string;
  uploadedAt: string;
  sampleCode: string;
  checkpointLabel: string;
}

export interface RecordSheet {
  sample: {
    id: number;
    code: string;
    replicate: number;
    study: { id: number; title: string; status: string };
    product: string;
    variant: { code: string; name: string };
    lotCode: string;
    /** The storage condition, with what its safety cautions depend on, and its role in this study; null for the initial test's retained sample. */
    condition: null | {
      id: number;
      name: string;
      location: string;
      kind: ConditionKind;
      setpointC: number | null;
      lowC: number | null;
      highC: number | null;
      lightSource: LightSource | null;
      role: ConditionRole;
    };
  };
  checkpoint: StudyCheckpoint;
  /**
   * The control reading this pull is judged against (read the same day): which, and whether the
   * control sample of this batch has been recorded there yet (if not, record it first).
   */
  controlReading: { checkpointId: number; label: string; dueDate: string; sampleCode: string | null; recorded: boolean; initial: boolean } | null;
  /** Whether recording is open now, and why not when it is not. */
  open: boolean;
  closedReason: string | null;
  locked: boolean;
  attributes: RecordAttribute[];
  /** The checkpoint's samples in label order, for "save and next". */
  siblings: { code: string; complete: boolean }[];
  photos: PhotoView[];
}

export interface RevisionView {
  version: number;
  value: number | string | boolean | null;
  method: Record<string, string | number> | null;
  verdict: StoredVerdict;
  recordedBy: string;
  recordedAt: string;
  /** correction, void, invalidated (an out-of-specification result replaced by its valid re-test), remeasure (a second bench reading kept beside it). */
  change: 'correction' | 'void' | 'invalidated' | 'remeasure' | null;
  /** The current version, when saved from a device's outbox. */
  device?: DeviceTimes | null;
  changedBy: string | null;
  changedAt: string | null;
  reason: string | null;
}

export interface ImportPreviewRow {
  line: number;
  sampleCode: string;
  attributeCode: string;
  value: string;
  readAt: string;
  checkpointLabel: string | null;
  evaluation: Evaluation | null;
  error: string | null;
}

/** The import preview: the first lines (at most 50), the counts of the whole file, the first problems (at most 200). */
export interface ImportPreview {
  rows: ImportPreviewRow[];
  /** Lines below the header. */
  totalRows: number;
  /** Lines ready to import. */
  okRows: number;
  /** Lines with a problem (all of them). */
  errorCount: number;
  errors: { line: number; message: string }[];
  /** Problems not listed in `errors`. */
  moreErrors: number;
}

export interface AuditRow {
  id: number;
  at: string;
  user: string | null;
  action: string;
  entity: string;
  entityId: string | null;
  oldValue: unknown;
  newValue: unknown;
  reason: string | null;
  /** The action in the audit vocabulary: "Signed", "Signature refused" (shared/audit-words.ts). */
  actionLabel: string;
  /** The entry in words, names and values as the screens show them (server/services/audit-text/). */
  sentence: string;
}

/** A device clock further than this from the server's (seconds) is flagged on the reading. */
export const CLOCK_SKEW_LIMIT_S = 600;

/** GET /api/bench/offline: what a device keeps to work offline (the Bench for 7 days and each of its Record sheets). */
export interface OfflineCopy {
  bench: import('./studies').BenchResponse;
  sheets: RecordSheet[];
  /** Sheets left out above the limit. */
  left: number;
  /** When the server made it. */
  at: string;
}
