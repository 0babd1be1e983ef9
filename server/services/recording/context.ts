/** Which sample belongs to which checkpoint, and whether a checkpoint is open for recording. */
import { and, asc, eq, inArray, isNull, or, sql } from 'drizzle-orm';
import { addDays } from '../../../shared/compute/schedule';
import type { DbOrTx } from '../../db/client';
import { attributes, checkpoints, observations, samples, studies, studyAttributes } from '../../db/schema';
import { notFound } from '../../http/errors';
import type { AttributeRow } from './values';

export interface Context {
  sample: typeof samples.$inferSelect;
  study: typeof studies.$inferSelect;
  checkpoint: typeof checkpoints.$inferSelect;
  attrs: { sa: typeof studyAttributes.$inferSelect; a: AttributeRow }[];
}

/**
 * The samples recorded at a checkpoint: a pull's are its condition's samples; the initial test's are
 * the batches' retained samples, plus, in a study recorded before the initial test existed, the
 * condition samples whose day-0 readings became it.
 */
export function samplesAtCheckpoint(cp: { id: number; kind: string; studyId: number; studyConditionId: number | null }) {
  if (cp.kind !== 'initial') return eq(samples.studyConditionId, cp.studyConditionId!);
  return and(
    eq(samples.studyId, cp.studyId),
    or(
      isNull(samples.studyConditionId),
      sql`EXISTS (SELECT 1 FROM ${observations} AS ob WHERE ob.sample_id = ${sql.raw('`samples`.`id`')} AND ob.checkpoint_id = ${cp.id})`,
    ),
  )!;
}

/** Whether a sample is recorded at a checkpoint (see {@link samplesAtCheckpoint}). */
export async function sampleAtCheckpoint(
  db: DbOrTx,
  sample: { id: number; studyId: number; studyConditionId: number | null },
  cp: { id: number; kind: string; studyId: number; studyConditionId: number | null },
): Promise<boolean> {
  if (cp.studyId !== sample.studyId) return false;
  if (cp.kind !== 'initial') return cp.studyConditionId === sample.studyConditionId;
  if (sample.studyConditionId == null) return true;
  const [held] = await db.select({ id: observations.id }).from(observations).where(and(eq(observations.sampleId, sample.id), eq(observations.checkpointId, cp.id))).limit(1);
  return Boolean(held);
}

/** Sample (by code) and checkpoint of the same study in the member's lab, the sample recorded there; or 404. */
export async function context(db: DbOrTx, labId: number, code: string, checkpointId: number, lock = false): Promise<Context> {
  const [sample] = await db
    .select()
    .from(samples)
    .where(and(eq(samples.labId, labId), eq(samples.code, code.toUpperCase())));
  if (!sample) throw notFound('No such sample in your lab');
  const q = db
    .select()
    .from(checkpoints)
    .where(and(eq(checkpoints.labId, labId), eq(checkpoints.id, checkpointId), eq(checkpoints.studyId, sample.studyId)));
  const [checkpoint] = lock ? await q.for('update') : await q;
  if (!checkpoint || !(await sampleAtCheckpoint(db, sample, checkpoint))) throw notFound('This sample has no such checkpoint');
  const [study] = await db.select().from(studies).where(eq(studies.id, sample.studyId));
  const attrs = await db
    .select({ sa: studyAttributes, a: attributes })
    .from(studyAttributes)
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(eq(studyAttributes.studyId, study.id))
    .orderBy(asc(studyAttributes.position));
  return { sample, study, checkpoint, attrs };
}

export function checkpointOpen(
  study: { status: string },
  cp: { status: string; dueDate: string; windowBefore: number; kind?: string },
  today: string,
  allowEarly: boolean,
): string | null {
  if (study.status === 'in_review' || study.status === 'decided') return 'The study is in review or decided: its observations are locked';
  if (study.status !== 'running') return `The study is ${study.status}`;
  if (cp.kind === 'extra_day0') return 'These are extra day-0 readings kept from before the initial test: correct them, do not add to them';
  if (cp.status === 'missed') return 'This checkpoint was marked missed';
  if (cp.status === 'cancelled') return 'This checkpoint was cancelled';
  const windowStart = addDays(cp.dueDate, -cp.windowBefore);
  if (today < windowStart && !allowEarly) return `This checkpoint opens on ${windowStart}`;
  return null;
}

/** Samples recorded at each of these checkpoints (id lists), for counts. */
export async function sampleIdsAt(db: DbOrTx, cps: { id: number; kind: string; studyId: number; studyConditionId: number | null }[]): Promise<Map<number, number[]>> {
  const out = new Map<number, number[]>();
  const pulls = cps.filter((c) => c.kind !== 'initial');
  const scIds = [...new Set(pulls.map((c) => c.studyConditionId!))];
  const byCondition = scIds.length
    ? await db.select({ id: samples.id, sc: samples.studyConditionId }).from(samples).where(inArray(samples.studyConditionId, scIds)).orderBy(asc(samples.labelOrder))
    : [];
  for (const c of pulls) out.set(c.id, byCondition.filter((s) => s.sc === c.studyConditionId).map((s) => s.id));
  for (const c of cps.filter((x) => x.kind === 'initial')) {
    const rows = await db.select({ id: samples.id }).from(samples).where(samplesAtCheckpoint(c)).orderBy(asc(samples.labelOrder));
    out.set(c.id, rows.map((r) => r.id));
  }
  return out;
}
