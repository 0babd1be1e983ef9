/**
 * The analysis of a study as GET /api/studies/:id/analysis answers it (`{ analysis }`):
 * the server builds it (server/services/analysis.ts), the client draws it.
 */
import type { Criterion } from '../compute/criteria';
import type { AcceptanceLimit, ChartLine } from '../compute/shelf-life';
import type { SuggestResult } from '../compute/suggest';
import type { AttributeScaleStep, StoredVerdict } from '../domain';

export interface SeriesPoint {
  checkpointId: number;
  label: string;
  months: number;
  dueDate: string;
  value: number | string | boolean | null;
  verdict: StoredVerdict;
  sampleCode: string;
}

/** Every result of one attribute for one batch at one condition. */
export interface Series {
  studyAttributeId: number;
  variantId: number;
  batchId: number;
  lotCode: string;
  studyConditionId: number;
  points: SeriesPoint[];
}

export interface Regression {
  studyAttributeId: number;
  variantId: number;
  studyConditionId: number;
  limit: AcceptanceLimit;
  months: number | null;
  status: string;
  message: string;
  model: string;
  lines: ChartLine[];
  levelPerSide: number | null;
  tValue: number | null;
  /** Search horizon used (months): "not reached within N months". */
  horizonMonths: number | null;
  /** Something to check, e.g. results exactly on a line. */
  warning?: string;
  /** Batches left out of the fit for too little data, with why (their readings stay on the chart). */
  excluded: { batch: string; reason: string }[];
  /** Separate lines: the other way of fitting them, shown beside. */
  alternative: { separateFit: string; months: number | null; status: string; governingBatch: string | null; message: string } | null;
}

export interface AnalysisVariant {
  id: number;
  code: string;
  name: string;
  lots: string[];
}

export interface AnalysisCondition {
  id: number;
  name: string;
  kind: string;
  role: string;
  setpointC: number | null;
  location: string;
  /** Over the readings between `from` (day 0) and `to` (today); `firstOn`/`lastOn`: the dates the log really covers (UTC). */
    mkt: { mktC: number; minC: number; maxC: number; meanC: number; readings: number; from: string; to: string; firstOn: string; lastOn: string } | null;
}

export interface AnalysisAttribute {
  id: number;
  code: string;
  name: string;
  kind: string;
  unit: string | null;
  decimals: number;
  criterion: Criterion;
  scale: AttributeScaleStep[] | null;
}

export interface DeltaESeries {
  variantId: number;
  studyConditionId: number;
  sampleCode: string;
  /** 'photo': estimated from photos with a reference card (an instrument reading wins where both exist). */
  source?: 'photo';
  points: { label: string; months: number; de76: number | null; de00: number | null }[];
}

export interface FirstFailure {
  variantId: number;
  studyConditionId: number;
  label: string | null;
  months: number | null;
  attributes: string[];
  /** Judged (pass or fail) readings after the initial test: 0 means no results yet, not "no failures". */
  dataPoints: number;
}

export interface StudyAnalysis {
  studyId: number;
  q10: number;
  variants: AnalysisVariant[];
  conditions: AnalysisCondition[];
  attributes: AnalysisAttribute[];
  series: Series[];
  limits: { studyAttributeId: number; variantId: number; limit: AcceptanceLimit; basis: string }[];
  regressions: Regression[];
  deltaE: DeltaESeries[];
  firstFailures: FirstFailure[];
  suggestions: { variantId: number; result: SuggestResult }[];
}
