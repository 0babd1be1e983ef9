/**
 * Which documents a study's release expects per variant, and which are attached: a challenge test
 * unless the variant's risk panel says low risk (or has none yet), a safety assessment and a
 * packaging compatibility record always. A document on the study counts for each of its variants.
 */
import { and, asc, eq, inArray } from 'drizzle-orm';
import { assessRisk, changedFactors, formulaShares } from '../../../shared/compute/microbial-risk';
import type { DocumentKind, ProductFileView } from '../../../shared/schemas/product-file';
import type { DbOrTx } from '../../db/client';
import { batches, riskAssessments, studies, studyBatches, variants } from '../../db/schema';
import { notFound } from '../../http/errors';
import { loadLines } from '../formulas';
import { documentsFor } from './documents';

async function variantsOf(db: DbOrTx, labId: number, studyId: number) {
  return db
    .selectDistinct({ id: variants.id, code: variants.code, name: variants.name })
    .from(studyBatches)
    .innerJoin(batches, eq(batches.id, studyBatches.batchId))
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .where(and(eq(studyBatches.labId, labId), eq(studyBatches.studyId, studyId)))
    .orderBy(asc(variants.code));
}

export async function studyProductFile(db: DbOrTx, labId: number, studyId: number): Promise<ProductFileView> {
  const [study] = await db.select({ id: studies.id }).from(studies).where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  if (!study) throw notFound('No such study in your lab');
  const vs = await variantsOf(db, labId, studyId);
  const ids = vs.map((v) => v.id);
  const [documents, assessments] = await Promise.all([
    documentsFor(db, labId, { variantIds: ids, studyIds: [studyId] }),
    ids.length ? db.select().from(riskAssessments).where(and(eq(riskAssessments.labId, labId), inArray(riskAssessments.variantId, ids))) : Promise.resolve([]),
  ]);
  const out: ProductFileView['variants'] = [];
  for (const v of vs) {
    const a = assessments.find((x) => x.variantId === v.id);
    let outOfDate = false;
    if (a) {
      const formula = formulaShares(await loadLines(db, labId, v.id));
      const now = { ...a.factors, waterPercent: formula.waterPercent, aluminiumChlorohydratePercent: formula.aluminiumChlorohydratePercent, alcoholPercent: a.entered.alcoholPercent ?? formula.alcoholPercent };
      outOfDate = changedFactors(a.factors, now).length > 0;
    }
    const has = (kind: DocumentKind) => documents.some((d) => d.kind === kind && (d.variantId === v.id || d.studyId === studyId));
    const expected: ProductFileView['variants'][number]['expected'] = [];
    if (!a || !a.lowRisk || outOfDate) {
      const why = !a
        ? 'No microbial-risk assessment yet: a challenge test is expected until one says low risk'
        : outOfDate
          ? 'The risk assessment is out of date (the formula changed): a challenge test is expected until it is redone'
          : 'Not low risk: a preservative efficacy test to ISO 11930 is expected';
      expected.push({ kind: 'challenge_test', present: has('challenge_test'), why });
    }
    expected.push({ kind: 'safety_assessment', present: has('safety_assessment'), why: 'Every product placed on the market needs a safety assessment' });
    expected.push({ kind: 'packaging_compatibility', present: has('packaging_compatibility'), why: 'The product in its final pack' });
    out.push({
      variantId: v.id,
      code: v.code,
      name: v.name,
      lowRisk: a ? a.lowRisk : null,
      riskText: a ? assessRisk(a.factors).text : null,
      outOfDate,
      paoMonths: a?.decidedPaoMonths ?? null,
      paoSuggested: a?.suggestedPaoMonths ?? null,
      expected,
    });
  }
  return { documents, variants: out };
}

/** The "needs a comment" rule at signing: a release without the challenge test the risk panel expects. */
export async function missingChallengeTest(db: DbOrTx, labId: number, studyId: number, variantId: number): Promise<string | null> {
  const file = await studyProductFile(db, labId, studyId);
  const v = file.variants.find((x) => x.variantId === variantId);
  const ct = v?.expected.find((e) => e.kind === 'challenge_test');
  // Only when the variant has a risk assessment: without one the listing shows the gap, but signing is not held up.
  if (!v || v.lowRisk === null || !ct || ct.present) return null;
  return `No challenge test is attached for variant ${v.code} (${ct.why.charAt(0).toLowerCase()}${ct.why.slice(1)}): say in a comment why you release without it`;
}

/** The product-file documents a signature covers (the variant's and the study's), kept in its audit row. */
export async function signedDocuments(db: DbOrTx, labId: number, studyId: number, variantId: number) {
  const docs = await documentsFor(db, labId, { variantIds: [variantId], studyIds: [studyId] });
  return docs.map((d) => ({ id: d.id, kind: d.kind, title: d.title, date: d.documentDate, sha256: d.sha256 }));
}
