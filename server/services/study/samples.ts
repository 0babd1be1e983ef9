/** A study's label sheet, and one sample's page. */
import { and, asc, eq, sql } from 'drizzle-orm';
import { dueCheckpoint } from '../../../shared/compute/bench';
import { addDays, checkpointState } from '../../../shared/compute/schedule';
import type { LabelSheet, SampleDue } from '../../../shared/schemas/studies';
import type { Db } from '../../db/client';
import { batches, checkpoints, observations, products, samples, storageConditions, studies, studyAttributes, studyConditions, variants } from '../../db/schema';
import { notFound } from '../../http/errors';
import { conditionForCautions } from '../storage-conditions';
import { studyDetail } from './detail';

/** What a retained sample's label says where a stored sample's names its condition. */
export const RETAINED_LABEL = 'Initial test · retained';

export async function labelSheet(db: Db, labId: number, studyId: number, origin: string): Promise<LabelSheet> {
  const [study] = await db
    .select({ id: studies.id, title: studies.title, startDate: studies.startDate, product: products.name })
    .from(studies)
    .innerJoin(products, eq(products.id, studies.productId))
    .where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  if (!study) throw notFound('No such study in your lab');
  const rows = await db
    .select({
      code: samples.code,
      replicate: samples.replicate,
      variant: variants.code,
      variantName: variants.name,
      lotCode: batches.lotCode,
      condition: storageConditions.name,
    })
    .from(samples)
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .leftJoin(studyConditions, eq(studyConditions.id, samples.studyConditionId))
    .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(and(eq(samples.labId, labId), eq(samples.studyId, studyId)))
    .orderBy(asc(samples.labelOrder));
  return {
    study,
    labels: rows.map((r) => ({
      code: r.code,
      url: `${origin}/samples/${r.code}`,
      product: study.product,
      variant: `${r.variant} · ${r.variantName}`,
      lotCode: r.lotCode,
      condition: r.condition ?? RETAINED_LABEL,
      startDate: study.startDate,
      replicate: r.replicate,
    })),
  };
}

export async function samplePage(db: Db, labId: number, rawCode: string, today: string) {
  const code = rawCode.toUpperCase();
  if (!/^[0-9A-Z]{4,12}$/.test(code)) throw notFound('No such sample in your lab');
  const [row] = await db
    .select({
      s: samples,
      study: { id: studies.id, title: studies.title, status: studies.status, container: studies.containerDescription },
      product: products.name,
      variant: { code: variants.code, name: variants.name },
      batch: { id: batches.id, lotCode: batches.lotCode, madeOn: batches.madeOn, packaging: batches.packaging },
      condition: conditionForCautions,
    })
    .from(samples)
    .innerJoin(studies, eq(studies.id, samples.studyId))
    .innerJoin(products, eq(products.id, studies.productId))
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .leftJoin(studyConditions, eq(studyConditions.id, samples.studyConditionId))
    .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(and(eq(samples.labId, labId), eq(samples.code, code)));
  if (!row) throw notFound('No such sample in your lab');
  const [detail, mine] = await Promise.all([
    studyDetail(db, labId, row.study.id, today),
    db
      .select({ cpId: observations.checkpointId, n: sql<number>`count(*)` })
      .from(observations)
      .where(and(eq(observations.labId, labId), eq(observations.sampleId, row.s.id), eq(observations.voided, false)))
      .groupBy(observations.checkpointId),
  ]);
  const retained = row.s.studyConditionId == null;
  const expected = detail.attributes.length;
  const cps = detail.checkpoints
    .filter((c) => (retained ? c.kind === 'initial' : c.studyConditionId === row.s.studyConditionId))
    .map((c) => {
      const recorded = Number(mine.find((m) => m.cpId === c.id)?.n ?? 0);
      return { ...c, sample: { recorded, expected, complete: expected > 0 && recorded >= expected } };
    });
  const due = dueCheckpoint(
    cps.map((c) => ({ ...c, complete: c.sample.complete })),
    today,
    retained,
  );
  const { container, ...study } = row.study;
  return {
    id: row.s.id,
    code: row.s.code,
    replicate: row.s.replicate,
    study,
    product: row.product,
    variant: row.variant,
    batch: row.batch,
    /** What the sample is kept in: the study's container (the batch's packaging is its bulk). */
    pack: container,
    /** Null for a retained sample of the initial test. */
    condition: retained ? null : row.condition,
    retained,
    /** Each checkpoint with this sample's own readings there (`sample.complete`: all saved). */
    checkpoints: cps,
    /** The checkpoint the Bench's "find a sample" opens (shared/compute/bench.ts), or null. */
    dueCheckpointId: due?.id ?? null,
    today,
  };
}

/**
 * What a scanned or typed sample code opens at the bench: its due checkpoint (shared/compute/bench.ts).
 * An unknown code and another lab's sample answer the same 404.
 */
export async function sampleDue(db: Db, labId: number, code: string, today: string): Promise<SampleDue> {
  const [s] = await db
    .select({ id: samples.id, code: samples.code, studyId: samples.studyId, scId: samples.studyConditionId, status: studies.status })
    .from(samples)
    .innerJoin(studies, eq(studies.id, samples.studyId))
    .where(and(eq(samples.labId, labId), eq(samples.code, code)));
  if (!s) throw notFound('No such sample in your lab');
  const retained = s.scId == null;
  const [cpRows, [attrs], counts] = await Promise.all([
    db
      .select()
      .from(checkpoints)
      .where(
        and(
          eq(checkpoints.labId, labId),
          eq(checkpoints.studyId, s.studyId),
          retained ? eq(checkpoints.kind, 'initial') : eq(checkpoints.studyConditionId, s.scId!),
        ),
      ),
    db.select({ n: sql<number>`count(*)` }).from(studyAttributes).where(eq(studyAttributes.studyId, s.studyId)),
    db
      .select({ cpId: observations.checkpointId, n: sql<number>`count(*)` })
      .from(observations)
      .where(and(eq(observations.labId, labId), eq(observations.sampleId, s.id), eq(observations.voided, false)))
      .groupBy(observations.checkpointId),
  ]);
  const expected = Number(attrs?.n ?? 0);
  // Only a running study has work to record; a draft has no checkpoints yet.
  const open = s.status === 'running';
  const cps = cpRows.map((c) => ({
    id: c.id,
    kind: c.kind,
    label: c.label,
    status: open ? c.status : 'closed',
    dueDate: c.dueDate,
    windowStart: addDays(c.dueDate, -c.windowBefore),
    windowEnd: addDays(c.dueDate, c.windowAfter),
    state: c.status === 'cancelled' ? ('cancelled' as const) : checkpointState(c.dueDate, c.windowBefore, c.windowAfter, today, c.status === 'done', c.status === 'missed'),
    complete: expected > 0 && Number(counts.find((x) => x.cpId === c.id)?.n ?? 0) >= expected,
  }));
  const due = dueCheckpoint(cps, today, retained);
  return {
    code: s.code,
    retained,
    checkpoint: due ? { id: due.id, label: due.label, dueDate: due.dueDate, state: due.state, complete: due.complete } : null,
  };
}
