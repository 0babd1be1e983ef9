/** A study's label sheet, and one sample's page. */
import { and, asc, eq } from 'drizzle-orm';
import type { LabelSheet } from '../../../shared/schemas/studies';
import type { Db } from '../../db/client';
import { batches, products, samples, storageConditions, studies, studyConditions, variants } from '../../db/schema';
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
      study: { id: studies.id, title: studies.title, status: studies.status },
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
  const detail = await studyDetail(db, labId, row.study.id, today);
  const retained = row.s.studyConditionId == null;
  return {
    id: row.s.id,
    code: row.s.code,
    replicate: row.s.replicate,
    study: row.study,
    product: row.product,
    variant: row.variant,
    batch: row.batch,
    /** Null for a retained sample of the initial test. */
    condition: retained ? null : row.condition,
    retained,
    checkpoints: detail.checkpoints.filter((c) => (retained ? c.kind === 'initial' : c.studyConditionId === row.s.studyConditionId)),
  };
}
