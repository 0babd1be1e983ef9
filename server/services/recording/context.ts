/** Which sample belongs to which checkpoint, and whether a checkpoint is open for recording. */
import { and, asc, eq, inArray, isNull, or, sql } from 'drizzle-orm';
import { addDays } from '../../../shared/compute/schedule';
import type { DbOrTx } from '../../db/client';
import { reusable } from '../../db/prepared';
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
  const [held] = await heldAt(db, { sampleId: sample.id, checkpointId: cp.id });
  return Boolean(held);
}

// Built once and reused (server/db/prepared.ts): every recording request runs these.
const heldAt = reusable((db) =>
  db
    .select({ id: observations.id })
    .from(observations)
    .where(and(eq(observations.sampleId, sql.placeholder('sampleId')), eq(observations.checkpointId, sql.placeholder('checkpointId'))))
    .limit(1),
);
const sampleByCode = reusable((db) =>
  db
    .select({ sample: samples, study: studies })
    .from(samples)
    .innerJoin(studies, eq(studies.id, samples.studyId))
    .where(and(eq(samples.labId, sql.placeholder('labId')), eq(samples.code, sql.placeholder('code')))),
);
const checkpointWhere = and(eq(checkpoints.labId, sql.placeholder('labId')), eq(checkpoints.id, sql.placeholder('id')), eq(checkpoints.studyId, sql.placeholder('studyId')));
const checkpointOf = reusable((db) => db.select().from(checkpoints).where(checkpointWhere));
const checkpointLocked = reusable((db) => db.select().from(checkpoints).where(checkpointWhere).for('update'));
const attributesOf = reusable((db) =>
  db
    .select({ sa: studyAttributes, a: attributes })
    .from(studyAttributes)
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(eq(studyAttributes.studyId, sql.placeholder('studyId')))
    .orderBy(asc(studyAttributes.position)),
);

/** Sample (by code) and checkpoint of the same study in the member's lab, the sample recorded there; or 404. */
export async function context(db: DbOrTx, labId: number, code: string, checkpointId: number, lock = false): Promise<Context> {
  const [found] = await sampleByCode(db, { labId, code: code.toUpperCase() });
  if (!found) throw notFound('No such sample in your lab');
  const { sample, study } = found;
  const [checkpoint] = await (lock ? checkpointLocked : checkpointOf)(db, { labId, id: checkpointId, studyId: sample.studyId });
  if (!checkpoint || !(await sampleAtCheckpoint(db, sample, checkpoint))) throw notFound('This sample has no such checkpoint');
  const attrs = await attributesOf(db, { studyId: study.id });
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
