/**
 * An observation's value in its attribute's terms, checking a typed value, judging it against its
 * criterion, and the baseline (the batch's initial-test reading) change criteria are judged from.
 */
import { and, asc, desc, eq, ne, or, sql } from 'drizzle-orm';
import { COMPARED_LEVELS, evaluate, physicalRangeError, type ComparedLevel, type Criterion, type Evaluation } from '../../../shared/compute/criteria';
import type { DbOrTx } from '../../db/client';
import { reusable } from '../../db/prepared';
import { attributes, checkpoints, observations, samples, storageConditions, studyConditions } from '../../db/schema';

type ObservationRow = typeof observations.$inferSelect;
export type AttributeRow = typeof attributes.$inferSelect;
export type Value = number | string | boolean;

/** The stored value of an observation in its attribute's terms. */
export function valueOf(kind: AttributeRow['kind'], o: Pick<ObservationRow, 'valueNum' | 'valueText' | 'valueBool'>): Value | null {
  switch (kind) {
    case 'measured':
    case 'graded':
      return o.valueNum;
    case 'pass_fail':
      return o.valueBool;
    default:
      return o.valueText;
  }
}

/** Checks a typed value against its attribute; returns the columns to store or a message. */
export function columnsFor(
  a: Pick<AttributeRow, 'kind' | 'code' | 'name' | 'scale' | 'physicalMin' | 'physicalMax' | 'decimals'>,
  value: Value,
): { valueNum: number | null; valueText: string | null; valueBool: boolean | null } | string {
  switch (a.kind) {
    case 'measured': {
      if (typeof value !== 'number') return `${a.name} needs a number`;
      const physical = physicalRangeError(a.code, value);
      if (physical) return physical;
      if (a.physicalMin != null && value < a.physicalMin) return `${a.name} cannot be below ${a.physicalMin}`;
      if (a.physicalMax != null && value > a.physicalMax) return `${a.name} cannot be above ${a.physicalMax}`;
      return { valueNum: value, valueText: null, valueBool: null };
    }
    case 'graded': {
      if (typeof value !== 'number' || !Number.isInteger(value)) return `${a.name} needs a grade`;
      if (a.scale && !a.scale.some((s) => s.grade === value)) return `${value} is not a grade of the ${a.name} scale`;
      return { valueNum: value, valueText: null, valueBool: null };
    }
    case 'compared':
      if (typeof value !== 'string' || !COMPARED_LEVELS.includes(value as ComparedLevel)) {
        return `${a.name} needs one of: no change, slight, marked, severe`;
      }
      return { valueNum: null, valueText: value, valueBool: null };
    case 'pass_fail':
      if (typeof value !== 'boolean') return `${a.name} needs pass or fail`;
      return { valueNum: null, valueText: null, valueBool: value };
    case 'note':
      if (typeof value !== 'string') return `${a.name} needs text`;
      return { valueNum: null, valueText: value, valueBool: null };
  }
}

export function evaluateFor(a: AttributeRow, criterion: Criterion, value: Value, baseline: Value | null): Evaluation {
  if (a.kind === 'note') return { verdict: 'no_criterion', message: 'Notes are not judged' };
  return evaluate(criterion, value, typeof baseline === 'number' ? baseline : undefined, {
    name: a.name,
    unit: a.unit ?? undefined,
    gradeLabels: a.scale ? Object.fromEntries(a.scale.map((s) => [s.grade, s.label])) : undefined,
  } as never);
}

export interface Baseline {
  value: Value;
  label: string;
  sampleCode: string;
  /** The method details of that reading, offered again at later pulls (absent when none were noted). */
  method?: Record<string, string | number>;
}

/** Readings that can be a baseline (see baselines), best first; built once (server/db/prepared.ts). */
const baselineRows = reusable((db) =>
  db
    .select({
      attr: observations.studyAttributeId,
      valueNum: observations.valueNum,
      valueText: observations.valueText,
      valueBool: observations.valueBool,
      verdict: observations.verdict,
      method: observations.method,
      code: samples.code,
      kind: checkpoints.kind,
      label: checkpoints.label,
    })
    .from(observations)
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
    .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
    .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(
      and(
        eq(observations.labId, sql.placeholder('labId')),
        eq(observations.studyId, sql.placeholder('studyId')),
        eq(samples.batchId, sql.placeholder('batchId')),
        eq(observations.voided, false),
        ne(observations.verdict, 'not_done'),
        or(
          eq(checkpoints.kind, 'initial'),
          and(eq(checkpoints.offsetN, 0), ne(checkpoints.offsetUnit, 'cycle'), ne(storageConditions.kind, 'mechanical')),
        ),
      ),
    )
    .orderBy(
      desc(sql`${checkpoints.kind} = 'initial'`),
      desc(sql`${samples.id} = ${sql.placeholder('sampleId')}`),
      desc(sql`${samples.replicate} = ${sql.placeholder('replicate')}`),
      asc(samples.labelOrder),
    ),
);

/**
 * Whether readings at this checkpoint can be baselines ({@link baselineRows}: the initial test, or a
 * day-0 pull that is not a cycle; the SQL also leaves out mechanical conditions, which this keeps in).
 * Anything else leaves a sample's baselines as they were.
 */
export function mayBeBaseline(cp: { kind: string; offsetN: number; offsetUnit: string }): boolean {
  return cp.kind !== 'pull' || (cp.offsetN === 0 && cp.offsetUnit !== 'cycle');
}

/**
 * The baseline of every attribute for one sample: the reading of its batch's initial test (the
 * retained sample of the same replicate first). Studies recorded before the initial test existed
 * fall back to a day 0 of the sample's own condition, else of any condition of the batch.
 */
export async function baselines(
  db: DbOrTx,
  study: { id: number; labId: number },
  sample: { id: number; batchId: number; replicate: number },
  attrs: { sa: { id: number }; a: AttributeRow }[],
): Promise<Map<number, Baseline>> {
  const rows = await baselineRows(db, { labId: study.labId, studyId: study.id, batchId: sample.batchId, sampleId: sample.id, replicate: sample.replicate });
  const out = new Map<number, Baseline>();
  for (const r of rows) {
    if (out.has(r.attr)) continue;
    const a = attrs.find((x) => x.sa.id === r.attr);
    const v = a ? valueOf(a.a.kind, r) : null;
    if (v != null) out.set(r.attr, { value: v, label: r.kind === 'initial' ? 'Initial' : 'Day 0', sampleCode: r.code, ...(r.method ? { method: r.method as Baseline['method'] } : {}) });
  }
  return out;
}

/**
 * The baseline a value at this checkpoint is judged from: the value itself at the initial test (or a
 * day 0 kept from before the initial test existed), else the sample's baseline.
 */
export function judgedFrom(cp: { kind: string; offsetN: number; offsetUnit: string }, base: Baseline | undefined, value: Value): Value | null {
  if (cp.kind === 'initial' || cp.kind === 'extra_day0') return value;
  if (cp.offsetN === 0 && cp.offsetUnit !== 'cycle' && base?.label !== 'Initial') return value;
  return base?.value ?? null;
}

/** The baseline one value of one attribute is judged from (see {@link baselines} and {@link judgedFrom}). */
export async function baselineFor(
  db: DbOrTx,
  study: { id: number; labId: number },
  sample: { id: number; batchId: number; replicate: number },
  checkpoint: { kind: string; offsetN: number; offsetUnit: string },
  studyAttributeId: number,
  kind: AttributeRow['kind'],
  value: Value,
): Promise<Value | null> {
  const map = await baselines(db, study, sample, [{ sa: { id: studyAttributeId }, a: { kind } as AttributeRow }]);
  return judgedFrom(checkpoint, map.get(studyAttributeId), value);
}
