/**
 * What the period after opening rests on besides the risk outcome and the pack: the variant's in-use
 * data (its samples in storage conditions marked "in use, opened daily") and its shelf life (a signed
 * decision's, else the engine's suggestion from its latest study).
 */
import { and, desc, eq, inArray, isNotNull, ne } from 'drizzle-orm';
import { inUseCoverage, offsetMonths, type InUsePull } from '../../../shared/compute/period-after-opening';
import type { RiskView } from '../../../shared/schemas/product-file';
import type { Db, DbOrTx } from '../../db/client';
import { batches, checkpoints, decisions, observations, samples, storageConditions, studies, studyConditions } from '../../db/schema';
import { analyzeStudy } from '../analysis';

/** The latest study with in-use samples of the variant: months without a failure, and the source. */
export async function inUseFromStudies(db: DbOrTx, labId: number, variantId: number): Promise<RiskView['inUse']> {
  const pulls = await db
    .select({ studyId: studies.id, title: studies.title, condition: storageConditions.name, cpId: checkpoints.id, unit: checkpoints.offsetUnit, n: checkpoints.offsetN })
    .from(checkpoints)
    .innerJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
    .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .innerJoin(studies, eq(studies.id, checkpoints.studyId))
    .innerJoin(samples, and(eq(samples.studyConditionId, studyConditions.id), eq(samples.labId, labId)))
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .where(and(eq(checkpoints.labId, labId), eq(storageConditions.inUse, true), eq(batches.variantId, variantId), eq(checkpoints.kind, 'pull')))
    .orderBy(desc(studies.id));
  if (!pulls.length) return null;
  const studyId = pulls[0].studyId;
  const mine = [...new Map(pulls.filter((p) => p.studyId === studyId).map((p) => [p.cpId, p])).values()];
  const verdicts = await db
    .select({ cpId: observations.checkpointId, verdict: observations.verdict })
    .from(observations)
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .where(
      and(
        eq(observations.labId, labId),
        eq(batches.variantId, variantId),
        eq(observations.voided, false),
        inArray(
          observations.checkpointId,
          mine.map((p) => p.cpId),
        ),
      ),
    );
  const input: InUsePull[] = mine.map((p) => ({ unit: p.unit, n: p.n, verdicts: verdicts.filter((v) => v.cpId === p.cpId).map((v) => v.verdict) }));
  const cover = inUseCoverage(input);
  const longest = Math.max(0, ...mine.map((p) => offsetMonths(p.unit, p.n) ?? 0));
  return {
    months: cover.months,
    source: `In-use condition "${mine[0].condition}" of "${mine[0].title}" (planned to ${Math.round(longest * 10) / 10} months): ${cover.reason}`,
  };
}

/** The shelf life the period after opening is held to: the latest signed release's, else the engine's suggestion. */
export async function shelfLifeFor(db: Db, labId: number, variantId: number, today: string): Promise<RiskView['shelfLife']> {
  const [signed] = await db
    .select({ months: decisions.shelfLifeMonths, title: studies.title })
    .from(decisions)
    .innerJoin(studies, eq(studies.id, decisions.studyId))
    .where(and(eq(decisions.labId, labId), eq(decisions.variantId, variantId), isNotNull(decisions.shelfLifeMonths), ne(decisions.outcome, 'not_released')))
    .orderBy(desc(decisions.id))
    .limit(1);
  if (signed?.months != null) return { months: signed.months, source: `signed decision on "${signed.title}"` };
  const [latest] = await db
    .selectDistinct({ id: studies.id, title: studies.title })
    .from(samples)
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .innerJoin(studies, eq(studies.id, samples.studyId))
    .where(and(eq(samples.labId, labId), eq(batches.variantId, variantId), ne(studies.status, 'draft')))
    .orderBy(desc(studies.id))
    .limit(1);
  if (!latest) return null;
  const analysis = await analyzeStudy(db, labId, latest.id, today);
  const months = analysis.suggestions.find((s) => s.variantId === variantId)?.result.months ?? null;
  return months != null && months > 0 ? { months, source: `suggested by the analysis of "${latest.title}", not yet signed` } : null;
}
