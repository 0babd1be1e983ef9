/**
 * The microbial-risk panel of a variant: formula shares from its lines, pH and water activity from
 * its latest study's initial readings (proposed), the pack from its latest batch (proposed), the
 * outcome and the suggested period after opening. The outcome is guidance, never a decision.
 */
import { and, desc, eq, inArray, isNotNull } from 'drizzle-orm';
import { assessRisk, changedFactors, formulaShares, packFromText, RISK_CAUTION, type RiskInputs } from '../../../shared/compute/microbial-risk';
import { suggestPao } from '../../../shared/compute/period-after-opening';
import type { RiskInput, RiskSnapshot, RiskView } from '../../../shared/schemas/product-file';
import type { Db, DbOrTx } from '../../db/client';
import { attributes, batches, checkpoints, observations, riskAssessments, samples, studies, studyAttributes, users } from '../../db/schema';
import { audit } from '../audit';
import { findVariantRow, loadLines } from '../formulas';
import { inUseFromStudies, shelfLifeFor } from './in-use';

/** What the suggested period after opening rests on besides the risk outcome and the pack. */
export interface PaoBasis {
  inUse: RiskView['inUse'];
  shelfLife: RiskView['shelfLife'];
}

/** The in-use data of the variant's studies and its shelf life (signed, else suggested). */
export async function paoBasis(db: Db, labId: number, variantId: number, today: string): Promise<PaoBasis> {
  const [inUse, shelfLife] = await Promise.all([inUseFromStudies(db, labId, variantId), shelfLifeFor(db, labId, variantId, today)]);
  return { inUse, shelfLife };
}

/** Study in-use data wins over a hand-entered figure (kept for an in-use test done elsewhere). */
const inUseMonthsOf = (basis: PaoBasis, entered: RiskInput) => (basis.inUse ? basis.inUse.months : entered.inUseMonths);

const round = (n: number, d: number) => Math.round(n * 10 ** d) / 10 ** d;

/** Mean pH and water activity of the initial test of the variant's latest study that has them. */
async function initialReadings(db: DbOrTx, labId: number, variantId: number) {
  const rows = await db
    .select({ code: attributes.code, value: observations.valueNum, studyId: studies.id, title: studies.title })
    .from(observations)
    .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .innerJoin(studies, eq(studies.id, observations.studyId))
    .where(
      and(
        eq(observations.labId, labId),
        eq(batches.variantId, variantId),
        eq(checkpoints.kind, 'initial'),
        eq(observations.voided, false),
        isNotNull(observations.valueNum),
        inArray(attributes.code, ['ph', 'water_activity']),
      ),
    )
    .orderBy(desc(studies.id));
  const pick = (code: string, decimals: number) => {
    const mine = rows.filter((r) => r.code === code);
    if (!mine.length) return { value: null, source: null };
    const latest = mine.filter((r) => r.studyId === mine[0].studyId);
    const mean = latest.reduce((s, r) => s + Number(r.value), 0) / latest.length;
    return { value: round(mean, decimals), source: `Initial test of "${latest[0].title}", mean of ${latest.length} reading${latest.length === 1 ? '' : 's'}` };
  };
  return { ph: pick('ph', 2), aw: pick('water_activity', 3) };
}

async function latestPack(db: DbOrTx, labId: number, variantId: number) {
  const [b] = await db
    .select({ packaging: batches.packaging, lotCode: batches.lotCode, fillingTempC: batches.fillingTempC })
    .from(batches)
    .where(and(eq(batches.labId, labId), eq(batches.variantId, variantId)))
    .orderBy(desc(batches.madeOn), desc(batches.id))
    .limit(1);
  if (!b) return { pack: null, source: null, fillingTempC: null, fillingSource: null };
  const fillingTempC = b.fillingTempC == null ? null : Number(b.fillingTempC);
  return { pack: packFromText(b.packaging), source: `Batch ${b.lotCode}: ${b.packaging}`, fillingTempC, fillingSource: fillingTempC == null ? null : `Batch ${b.lotCode}` };
}

function snapshotOf(entered: RiskInput, formula: { waterPercent: number; alcoholPercent: number; aluminiumChlorohydratePercent: number }): RiskSnapshot {
  return {
    waterPercent: formula.waterPercent,
    alcoholPercent: entered.alcoholPercent ?? formula.alcoholPercent,
    aluminiumChlorohydratePercent: formula.aluminiumChlorohydratePercent,
    ph: entered.ph,
    waterActivity: entered.waterActivity,
    fillingTempC: entered.fillingTempC,
    solventBased: entered.solventBased,
    oxidising: entered.oxidising,
    pack: entered.pack,
  };
}

const INPUT_WORDS: Record<keyof RiskInputs, string> = {
  waterPercent: 'water share in the formula',
  alcoholPercent: 'alcohol share',
  aluminiumChlorohydratePercent: 'aluminium chlorohydrate share',
  ph: 'pH',
  waterActivity: 'water activity',
  fillingTempC: 'filling temperature',
  solventBased: 'solvent-based',
  oxidising: 'oxidising',
  pack: 'pack',
};

export async function riskView(db: Db, labId: number, variantId: number, today: string): Promise<RiskView> {
  await findVariantRow(db, labId, variantId);
  const [lines, readings, pack, [row], basis] = await Promise.all([
    loadLines(db, labId, variantId),
    initialReadings(db, labId, variantId),
    latestPack(db, labId, variantId),
    db
      .select({ a: riskAssessments, who: users.name })
      .from(riskAssessments)
      .innerJoin(users, eq(users.id, riskAssessments.updatedBy))
      .where(and(eq(riskAssessments.labId, labId), eq(riskAssessments.variantId, variantId))),
    paoBasis(db, labId, variantId, today),
  ]);
  const formula = formulaShares(lines);
  let assessment: RiskView['assessment'] = null;
  if (row) {
    const stored = row.a.factors;
    const outcome = assessRisk(stored);
    const now = snapshotOf(row.a.entered, formula);
    assessment = {
      entered: row.a.entered,
      factors: outcome.factors,
      lowRisk: row.a.lowRisk,
      text: row.a.outcomeText,
      suggestedPao: suggestPao({ lowRisk: row.a.lowRisk, pack: stored.pack, inUseMonths: inUseMonthsOf(basis, row.a.entered), shelfLifeMonths: basis.shelfLife?.months ?? null }),
      decidedPaoMonths: row.a.decidedPaoMonths,
      updatedBy: row.who,
      updatedAt: row.a.updatedAt.toISOString(),
      outOfDate: changedFactors(stored, now).map((k) => INPUT_WORDS[k]),
    };
  }
  return {
    variantId,
    formula,
    proposed: {
      ph: readings.ph.value,
      phSource: readings.ph.source,
      waterActivity: readings.aw.value,
      waterActivitySource: readings.aw.source,
      pack: pack.pack,
      packSource: pack.source,
      fillingTempC: pack.fillingTempC,
      fillingTempSource: pack.fillingSource,
    },
    inUse: basis.inUse,
    shelfLife: basis.shelfLife,
    assessment,
    caution: RISK_CAUTION,
  };
}

/**
 * Saves the panel: the entered values, the factor inputs with them, the outcome; one audit row.
 * `basis` (paoBasis) gives the in-use data and shelf life; without it (the demo) the in-use data is read here.
 */
export async function saveRisk(db: DbOrTx, who: { id: number; labId: number }, variantId: number, input: RiskInput, basis?: PaoBasis): Promise<void> {
  const b = basis ?? { inUse: await inUseFromStudies(db, who.labId, variantId), shelfLife: null };
  await db.transaction(async (tx) => {
    const v = await findVariantRow(tx, who.labId, variantId, true);
    const formula = formulaShares(await loadLines(tx, who.labId, variantId));
    const factors = snapshotOf(input, formula);
    const outcome = assessRisk(factors);
    const pao = suggestPao({ lowRisk: outcome.lowRisk, pack: input.pack, inUseMonths: inUseMonthsOf(b, input), shelfLifeMonths: b.shelfLife?.months ?? null });
    const values = {
      entered: input,
      factors,
      lowRisk: outcome.lowRisk,
      outcomeText: outcome.text,
      suggestedPaoMonths: pao.months,
      decidedPaoMonths: input.decidedPaoMonths,
      updatedBy: who.id,
      updatedAt: new Date(),
    };
    const [old] = await tx.select().from(riskAssessments).where(and(eq(riskAssessments.labId, who.labId), eq(riskAssessments.variantId, variantId))).for('update');
    if (old) await tx.update(riskAssessments).set(values).where(eq(riskAssessments.id, old.id));
    else await tx.insert(riskAssessments).values({ labId: who.labId, variantId, ...values });
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: old ? 'update' : 'create',
      entity: 'risk_assessment',
      entityId: variantId,
      oldValue: old ? { lowRisk: old.lowRisk, outcome: old.outcomeText, decidedPaoMonths: old.decidedPaoMonths } : null,
      newValue: { variant: v.code, lowRisk: outcome.lowRisk, outcome: outcome.text, suggestedPaoMonths: pao.months, decidedPaoMonths: input.decidedPaoMonths, factors },
    });
  });
}
