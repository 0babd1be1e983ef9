/**
 * The review API as the client sees it (shapes from shared/schemas/reviews.ts and
 * server/services/reviews.ts reviewOf()), and the words and small formatters the
 * review screens share. Pure apart from the API calls.
 */
import type { SuggestResult } from '@shared/compute/suggest';
import type { DecisionOutcome } from '@shared/domain';
import type { Investigation } from '@shared/schemas/oos';
import type { DecidedStudyItem, DecisionInput, DecisionView, ReviewQueueItem, SubmissionView, SubmitInput } from '@shared/schemas/reviews';
import { api } from '@/api/client';
import { formatInstant } from '@/format/dates';

export interface ReviewVariant {
  id: number;
  code: string;
  name: string;
}

/** GET /api/studies/:id/review answers `{ review }` in this shape. */
export interface StudyReview {
  variants: ReviewVariant[];
  /** The latest submission, or null before the study was ever submitted. */
  submission: SubmissionView | null;
  submissions: SubmissionView[];
  /** Every decision, oldest first, superseded ones included. */
  decisions: DecisionView[];
  /** The decisions in force: one per decided variant. */
  current: DecisionView[];
  /** SHA-256 of the study data as it is now. */
  dataHash: string;
  /** Every out-of-specification result and its investigation. */
  investigations: Investigation[];
}

export const reviewApi = {
  /** The Reviews page: the queue (oldest submission first) and the decided studies (latest decision first). */
  list: () => api.get<{ queue: ReviewQueueItem[]; decided: DecidedStudyItem[] }>('/reviews'),
  get: async (studyId: number | string) => (await api.get<{ review: StudyReview }>(`/studies/${studyId}/review`)).review,
  submit: async (studyId: number | string, input: SubmitInput) => (await api.post<{ review: StudyReview }>(`/studies/${studyId}/submit`, input)).review,
  decide: (studyId: number | string, input: DecisionInput) => api.post<{ decisionId: number; review: StudyReview }>(`/studies/${studyId}/decisions`, input),
};

/** Icon name per outcome (ReviewIcon); always shown beside the outcome's words. */
export const OUTCOME_ICONS: Record<DecisionOutcome, string> = {
  released: 'released',
  released_with_conditions: 'released_with_conditions',
  not_released: 'not_released',
  continue_testing: 'continue_testing',
};

/** One line on what each outcome does, shown under the choice. */
export const OUTCOME_HINTS: Record<DecisionOutcome, string> = {
  released: 'The variant may go on sale with the shelf life below.',
  released_with_conditions: 'The variant may go on sale only as the conditions say (they belong on the label or in the instructions).',
  not_released: 'The variant may not go on sale. Say why in the comment.',
  continue_testing: 'Reopens the study with the checkpoints you add; it comes back for review when the formulator submits again.',
};

/** '2026-12-14 09:30:12 UTC' from an ISO instant. */
export function utcText(iso: string): string {
  const t = new Date(iso);
  if (Number.isNaN(t.getTime())) return iso;
  return `${t.toISOString().slice(0, 19).replace('T', ' ')} UTC`;
}

/**
 * A signature time as everything else is shown, in lab time with its zone, and the UTC record beside
 * it: '2026-12-14 10:30 Europe/Berlin (2026-12-14 09:30:12 UTC)'; a lab on UTC gets the UTC text alone.
 */
export function signedTimeText(iso: string, lab: { timeZone: string; dateFormat?: string } | null | undefined): string {
  if (!lab || lab.timeZone === 'UTC') return utcText(iso);
  return `${formatInstant(iso, lab.timeZone, lab.dateFormat)} ${lab.timeZone} (${utcText(iso)})`;
}

/** '12 months', '1 month', or a dash. */
export function months(n: number | null | undefined): string {
  if (n == null || !Number.isFinite(n)) return '—';
  return `${n} ${n === 1 ? 'month' : 'months'}`;
}

/** The SHA-256 hex split into groups of 8 so it can be read aloud and compared. */
export function hashGroups(hex: string): string {
  return hex.replace(/(.{8})/g, '$1 ').trim();
}

/** The earliest made date among a variant's lots in a study, for the best-before date. */
export function earliestMadeOn(batches: { madeOn: string; variant: { id: number } }[], variantId: number): string | null {
  const dates = batches.filter((b) => b.variant.id === variantId).map((b) => b.madeOn).sort();
  return dates[0] ?? null;
}

/**
 * A small CSV reader (RFC 4180: quoted fields, doubled quotes, CRLF) for the
 * observations export, which the print view reads so technicians see it too.
 */
export function parseCsv(text: string): Record<string, string>[] {
  const rows: string[][] = [];
  let row: string[] = [];
  let cell = '';
  let quoted = false;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i];
    if (quoted) {
      if (ch === '"' && text[i + 1] === '"') {
        cell += '"';
        i++;
      } else if (ch === '"') quoted = false;
      else cell += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === ',') {
      row.push(cell);
      cell = '';
    } else if (ch === '\n' || ch === '\r') {
      if (ch === '\r' && text[i + 1] === '\n') i++;
      row.push(cell);
      rows.push(row);
      row = [];
      cell = '';
    } else cell += ch;
  }
  if (cell !== '' || row.length) {
    row.push(cell);
    rows.push(row);
  }
  const [head, ...body] = rows;
  if (!head) return [];
  return body.filter((r) => r.length > 1 || r[0] !== '').map((r) => Object.fromEntries(head.map((h, i) => [h, r[i] ?? ''])));
}

/**
 * The parts of GET /api/studies/:id/analysis (server/services/analysis.ts StudyAnalysis)
 * the review and report screens read. Formulators and owners only; technicians get 403.
 */
export interface ReviewAnalysis {
  studyId: number;
  q10: number;
  variants: { id: number; code: string; name: string; lots: string[] }[];
  conditions: {
    id: number;
    name: string;
    kind: string;
    role: string;
    setpointC: number | null;
    location: string;
    /** Over the readings between `from` (day 0) and `to` (today); `firstOn`/`lastOn`: the dates the log really covers (UTC). */
    mkt: { mktC: number; minC: number; maxC: number; meanC: number; readings: number; from: string; to: string; firstOn: string; lastOn: string } | null;
  }[];
  attributes: { id: number; code: string; name: string; kind: string; unit: string | null; decimals: number }[];
  series: {
    studyAttributeId: number;
    variantId: number;
    batchId: number;
    lotCode: string;
    studyConditionId: number;
    points: { checkpointId: number; label: string; months: number; value: number | string | boolean | null; verdict: string; sampleCode: string }[];
  }[];
  limits: { studyAttributeId: number; variantId: number; limit: { lower: number | null; upper: number | null }; basis: string }[];
  firstFailures: { variantId: number; studyConditionId: number; label: string | null; months: number | null; attributes: string[]; dataPoints: number }[];
  suggestions: { variantId: number; result: SuggestResult }[];
}


/** A figure of months with one decimal where it has one ('11.4 months'), or a dash. */
export function figureText(x: number | null | undefined): string {
  if (x == null || !Number.isFinite(x)) return '—';
  const whole = Math.abs(x - Math.round(x)) < 1e-9;
  return `${whole ? Math.round(x) : x.toFixed(1)} months`;
}
