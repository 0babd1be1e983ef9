/**
 * Analysis of a study: the data behind the charts, color differences, chamber
 * MKT per condition, and a suggested shelf life per variant from the shared
 * engine (shared/compute/suggest.ts), every figure with its reasons.
 */
import { and, asc, eq, sql } from 'drizzle-orm';
import { deltaE2000, deltaE76 } from '../../shared/compute/color';
import type { Criterion } from '../../shared/compute/criteria';
import { daysBetween } from '../../shared/compute/schedule';
import { limitValueText, shelfLifeMultiBatch, type AcceptanceLimit } from '../../shared/compute/shelf-life';
import { DAYS_PER_MONTH, suggestShelfLife, type SuggestCondition } from '../../shared/compute/suggest';
import type { Db } from '../db/client';
import { chamberLogs, chamberReadings, checkpoints, observations, samples, studyAttributes } from '../db/schema';
import { studyDetail } from './studies';
import type { Regression, Series, SeriesPoint, StudyAnalysis } from '../../shared/schemas/analysis';
import { valueOf } from './records';
import { attributes } from '../db/schema';

export type { Regression, Series, SeriesPoint, StudyAnalysis } from '../../shared/schemas/analysis';

/** Months from day 0 to a checkpoint's nominal date (1 month = 30.4375 days). */
const monthsOf = (start: string, cp: { offsetUnit: string; offsetN: number; dueDate: string }) =>
  cp.offsetUnit === 'month' ? cp.offsetN : daysBetween(start, cp.dueDate) / DAYS_PER_MONTH;

/** Absolute limits from a criterion; change criteria need the initial (day-0) value. */
export function absoluteLimit(c: Criterion, baseline: number | null, decimals: number): { limit: AcceptanceLimit; basis: string } | null {
  switch (c.kind) {
    case 'range':
      return { limit: { lower: c.min ?? null, upper: c.max ?? null, decimals }, basis: 'range' };
    // The basis names the limits as used, at full precision (a mean of 5.485 ± 0.5 gives 4.985, not 4.99).
    case 'change_abs': {
      if (baseline == null) return null;
      const limit = { lower: baseline - c.max, upper: baseline + c.max, decimals };
      return { limit, basis: `initial mean ${limitValueText(baseline)} ± ${c.max}: ${limitValueText(limit.lower)} to ${limitValueText(limit.upper)}` };
    }
    case 'change_pct': {
      if (baseline == null) return null;
      const limit = { lower: baseline * (1 - c.max / 100), upper: baseline * (1 + c.max / 100), decimals };
      return { limit, basis: `initial mean ${limitValueText(baseline)} ± ${c.max} %: ${limitValueText(limit.lower)} to ${limitValueText(limit.upper)}` };
    }
    default:
      return null;
  }
}

/** SQL mean kinetic temperature (ΔH/R = 10 000 K; Haynes 1971, as in USP <1160>) over a condition's logs in a period. */
async function mktFor(db: Db, labId: number, conditionId: number, from: string, to: string) {
  const [row] = await db
    .select({
      n: sql<number>`count(*)`,
      mkt: sql<number | null>`-10000 / LN(AVG(EXP(-10000 / (${chamberReadings.tempC} + 273.15)))) - 273.15`,
      min: sql<number | null>`MIN(${chamberReadings.tempC})`,
      max: sql<number | null>`MAX(${chamberReadings.tempC})`,
      mean: sql<number | null>`AVG(${chamberReadings.tempC})`,
      first: sql<string | null>`DATE_FORMAT(MIN(${chamberReadings.at}), '%Y-%m-%d')`,
      last: sql<string | null>`DATE_FORMAT(MAX(${chamberReadings.at}), '%Y-%m-%d')`,
    })
    .from(chamberReadings)
    .innerJoin(chamberLogs, eq(chamberLogs.id, chamberReadings.logId))
    .where(
      and(
        eq(chamberLogs.labId, labId),
        eq(chamberLogs.conditionId, conditionId),
        sql`${chamberReadings.at} >= ${from}`,
        sql`${chamberReadings.at} < DATE_ADD(${to}, INTERVAL 1 DAY)`,
      ),
    );
  const n = Number(row?.n ?? 0);
  const r2 = (x: unknown) => Math.round(Number(x) * 100) / 100;
  return n > 0 && row.mkt != null
    ? { mktC: r2(row.mkt), minC: r2(row.min), maxC: r2(row.max), meanC: r2(row.mean), readings: n, from, to, firstOn: String(row.first), lastOn: String(row.last) }
    : null;
}

export async function analyzeStudy(db: Db, labId: number, studyId: number, today: string, q10: number): Promise<StudyAnalysis> {
  const d = await studyDetail(db, labId, studyId, today);
  const attrRows = await db
    .select({ sa: studyAttributes, a: attributes })
    .from(studyAttributes)
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(eq(studyAttributes.studyId, studyId))
    .orderBy(asc(studyAttributes.position));
  // Only the columns the analysis reads: whole rows of three tables cost several times more to map.
  const obs = await db
    .select({
      o: {
        studyAttributeId: observations.studyAttributeId,
        valueNum: observations.valueNum,
        valueText: observations.valueText,
        valueBool: observations.valueBool,
        verdict: observations.verdict,
      },
      cp: { id: checkpoints.id, kind: checkpoints.kind, label: checkpoints.label, dueDate: checkpoints.dueDate, offsetUnit: checkpoints.offsetUnit, offsetN: checkpoints.offsetN },
      s: { batchId: samples.batchId, studyConditionId: samples.studyConditionId, code: samples.code },
    })
    .from(observations)
    .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .where(and(eq(observations.labId, labId), eq(observations.studyId, studyId), eq(observations.voided, false)))
    .orderBy(asc(checkpoints.dueDate));

  const batchOf = new Map(d.batches.map((b) => [b.id, b]));
  const variants = [...new Map(d.batches.map((b) => [b.variant.id, b.variant])).values()].map((v) => ({
    ...v,
    lots: d.batches.filter((b) => b.variant.id === v.id).map((b) => b.lotCode),
  }));

  // ---------------------------------------------------------------- series
  // The initial test is t = 0 of every condition for its batch: its readings join each condition's series.
  const seriesMap = new Map<string, Series>();
  const initialValues = new Map<string, number[]>();
  for (const { o, cp, s } of obs) {
    const a = attrRows.find((x) => x.sa.id === o.studyAttributeId);
    const b = batchOf.get(s.batchId);
    if (!a || !b) continue;
    const value = o.verdict === 'not_done' ? null : valueOf(a.a.kind, o);
    const initial = cp.kind === 'initial';
    if (initial && typeof value === 'number') {
      const k = `${b.variant.id}:${o.studyAttributeId}`;
      initialValues.set(k, [...(initialValues.get(k) ?? []), value]);
    }
    const targets = initial ? d.conditions.map((c) => c.id) : s.studyConditionId != null ? [s.studyConditionId] : [];
    for (const scId of targets) {
      const key = `${o.studyAttributeId}:${s.batchId}:${scId}`;
      if (!seriesMap.has(key)) {
        seriesMap.set(key, { studyAttributeId: o.studyAttributeId, variantId: b.variant.id, batchId: b.id, lotCode: b.lotCode, studyConditionId: scId, points: [] });
      }
      seriesMap.get(key)!.points.push({
        checkpointId: cp.id,
        label: cp.label,
        months: initial ? 0 : monthsOf(d.startDate, cp),
        dueDate: cp.dueDate,
        value,
        verdict: o.verdict,
        sampleCode: s.code,
      });
    }
  }
  const series = [...seriesMap.values()];

  // ---------------------------------------------------------------- limits per variant and attribute
  // A change criterion's limits come from the variant's mean initial reading (a study recorded before
  // the initial test existed: its day-0 readings).
  const limits: StudyAnalysis['limits'] = [];
  for (const v of variants) {
    for (const { sa, a } of attrRows) {
      if (a.kind !== 'measured') continue;
      const day0 =
        initialValues.get(`${v.id}:${sa.id}`) ??
        series
          .filter((x) => x.variantId === v.id && x.studyAttributeId === sa.id)
          .flatMap((x) => x.points.filter((p) => p.months === 0 && typeof p.value === 'number').map((p) => p.value as number));
      const baseline = day0.length ? day0.reduce((s, x) => s + x, 0) / day0.length : null;
      const l = absoluteLimit(sa.criterion, baseline, a.decimals);
      if (l) limits.push({ studyAttributeId: sa.id, variantId: v.id, ...l });
    }
  }

  // ---------------------------------------------------------------- regressions (real-time conditions, measured attributes with limits)
  const regressions: Regression[] = [];
  for (const c of d.conditions.filter((x) => x.role === 'real_time')) {
    for (const l of limits) {
      const pts = series
        .filter((x) => x.variantId === l.variantId && x.studyAttributeId === l.studyAttributeId && x.studyConditionId === c.id)
        .flatMap((x) => x.points.filter((p) => typeof p.value === 'number').map((p) => ({ batch: x.lotCode, t: p.months, y: p.value as number })));
      if (!pts.length) continue;
      const r = shelfLifeMultiBatch(pts, l.limit);
      regressions.push({
        studyAttributeId: l.studyAttributeId,
        variantId: l.variantId,
        studyConditionId: c.id,
        limit: l.limit,
        months: r.months,
        status: r.status,
        message: r.message,
        model: r.model,
        lines: r.lines,
        levelPerSide: r.levelPerSide,
        tValue: r.tValue,
        horizonMonths: r.horizonMonths,
        ...(r.warning ? { warning: r.warning } : {}),
        excluded: r.excluded,
        alternative: r.alternative,
      });
    }
  }

  // ---------------------------------------------------------------- color difference from day 0
  const code = (c: string) => attrRows.find((x) => x.a.code === c)?.sa.id;
  const [lId, aId, bId] = [code('color_l'), code('color_a'), code('color_b')];
  const deltaE: StudyAnalysis['deltaE'] = [];
  if (lId && aId && bId) {
    const initialIds = new Set(d.checkpoints.filter((c) => c.kind === 'initial').map((c) => c.id));
    for (const s of d.samples) {
      if (s.studyConditionId == null) continue;
      // This sample's own readings, and its batch's initial test as the reference.
      const pick = (id: number) =>
        series
          .find((x) => x.studyAttributeId === id && x.studyConditionId === s.studyConditionId && x.batchId === s.batchId)
          ?.points.filter((p, i, all) => (p.sampleCode === s.code || initialIds.has(p.checkpointId)) && all.findIndex((q) => q.checkpointId === p.checkpointId) === i) ?? [];
      const L = pick(lId);
      const A = pick(aId);
      const B = pick(bId);
      const at = (arr: SeriesPoint[], cpId: number) => arr.find((p) => p.checkpointId === cpId)?.value;
      const zero = L.find((p) => p.months === 0);
      if (!zero) continue;
      const z = { L: at(L, zero.checkpointId), a: at(A, zero.checkpointId), b: at(B, zero.checkpointId) };
      if (![z.L, z.a, z.b].every((x) => typeof x === 'number')) continue;
      const points = L.filter((p) => typeof at(A, p.checkpointId) === 'number' && typeof at(B, p.checkpointId) === 'number' && typeof p.value === 'number').map((p) => {
        const cur = { L: p.value as number, a: at(A, p.checkpointId) as number, b: at(B, p.checkpointId) as number };
        const ref = z as { L: number; a: number; b: number };
        return { label: p.label, months: p.months, de76: deltaE76(ref, cur), de00: deltaE2000(ref, cur) };
      });
      const b = batchOf.get(s.batchId)!;
      deltaE.push({ variantId: b.variant.id, studyConditionId: s.studyConditionId!, sampleCode: s.code, points });
    }
  }

  // ---------------------------------------------------------------- first failure per variant and condition
  const firstFailures: StudyAnalysis['firstFailures'] = [];
  for (const v of variants) {
    for (const c of d.conditions) {
      const fails = series
        .filter((x) => x.variantId === v.id && x.studyConditionId === c.id)
        .flatMap((x) => x.points.filter((p) => p.verdict === 'fail').map((p) => ({ p, attr: attrRows.find((a) => a.sa.id === x.studyAttributeId)!.a.name })));
      const first = fails.sort((a, b) => a.p.months - b.p.months)[0];
      firstFailures.push({
        variantId: v.id,
        studyConditionId: c.id,
        label: first?.p.label ?? null,
        months: first?.p.months ?? null,
        attributes: first ? [...new Set(fails.filter((f) => f.p.months === first.p.months).map((f) => f.attr))] : [],
      });
    }
  }

  // ---------------------------------------------------------------- suggestion per variant
  const realTimeCold = d.conditions.some((c) => c.role === 'real_time' && c.setpointC != null && c.setpointC <= 8);
  const suggestions = variants.map((v) => {
    const conditions: SuggestCondition[] = d.conditions.map((c) => ({
      name: c.name,
      kind: c.kind,
      // A control (usually a fridge) is compared against, not projected from: its failures are noted.
      role: c.role,
      setpointC: c.setpointC,
      attributes: attrRows.map(({ sa, a }) => ({
        name: a.name,
        kind: a.kind,
        limit: limits.find((l) => l.variantId === v.id && l.studyAttributeId === sa.id)?.limit ?? null,
        observations: series
          .filter((x) => x.variantId === v.id && x.studyAttributeId === sa.id && x.studyConditionId === c.id)
          .flatMap((x) =>
            x.points.map((p) => ({
              months: p.months,
              batch: x.lotCode,
              value: typeof p.value === 'number' && a.kind === 'measured' ? p.value : null,
              passed: p.verdict === 'pass' ? true : p.verdict === 'fail' ? false : null,
            })),
          ),
      })),
    }));
    const madeDates = d.batches.filter((b) => b.variant.id === v.id).map((b) => b.madeOn).sort();
    return {
      variantId: v.id,
      result: suggestShelfLife({ storage: realTimeCold ? 'refrigerated' : 'room', q10, conditions, madeDate: madeDates[0] ?? null }),
    };
  });

  const conditionsOut = await Promise.all(
    d.conditions.map(async (c) => ({
      id: c.id,
      name: c.name,
      kind: c.kind,
      role: c.role,
      setpointC: c.setpointC,
      location: c.location,
      mkt: await mktFor(db, labId, c.conditionId, d.startDate, today),
    })),
  );

  return {
    studyId,
    q10,
    variants,
    conditions: conditionsOut,
    attributes: attrRows.map(({ sa, a }) => ({ id: sa.id, code: a.code, name: a.name, kind: a.kind, unit: a.unit, decimals: a.decimals, criterion: sa.criterion, scale: a.scale ?? null })),
    series,
    limits,
    regressions,
    deltaE,
    firstFailures,
    suggestions,
  };
}
