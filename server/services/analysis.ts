/**
 * Analysis of a study: the data behind the charts, color differences, chamber
 * MKT per condition, and a suggested shelf life per variant from the shared
 * engine (shared/compute/suggest.ts), every figure with its reasons.
 */
import { deltaE2000, deltaE76 } from '../../shared/compute/color';
import type { Criterion } from '../../shared/compute/criteria';
import { daysBetween } from '../../shared/compute/schedule';
import { photoDeltaESeries } from './photo-colour/analysis';
import { limitValueText, shelfLifeMultiBatch, type AcceptanceLimit } from '../../shared/compute/shelf-life';
import { DAYS_PER_MONTH, suggestShelfLife, type SuggestCondition } from '../../shared/compute/suggest';
import type { ConditionKind, ConditionRole } from '../../shared/domain';
import type { Db } from '../db/client';
import { rows } from '../db/prepared';
import { notFound } from '../http/errors';
import { conditionMkts, type ConditionMkt } from './chamber-rollups';
import type { Regression, Series, SeriesPoint, StudyAnalysis } from '../../shared/schemas/analysis';
import { valueOf } from './records';
import type { AttributeRow } from './recording/values';

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

/** Rounds a condition's mean kinetic temperature figures for the analysis (ΔH/R = 10 000 K; Haynes 1971, as in USP <1160>). */
function mktOut(row: ConditionMkt | undefined, from: string, to: string) {
  const r2 = (x: number) => Math.round(x * 100) / 100;
  return row
    ? { mktC: r2(row.mktC), minC: r2(row.minC), maxC: r2(row.maxC), meanC: r2(row.meanC), readings: row.n, from, to, firstOn: row.first, lastOn: row.last }
    : null;
}

/** The attribute columns the analysis reads (study attribute joined with its attribute). */
interface AttrRow {
  sa: { id: number; criterion: Criterion };
  a: { code: string; name: string; kind: AttributeRow['kind']; unit: string | null; decimals: number; scale: AttributeRow['scale'] };
}

const json = <T>(v: unknown): T => (typeof v === 'string' ? (JSON.parse(v) as T) : (v as T));
const num = (v: unknown) => (v == null ? null : Number(v));

/**
 * What the analysis reads of a study, in six prepared statements run together: the study, its
 * batches, conditions, attributes, samples and every valid reading (only the columns used; rows as
 * plain objects, not mapped through the ORM). 404 when the study is not in the lab.
 */
async function analysisData(db: Db, labId: number, studyId: number) {
  const [study, batchRows, condRows, attrRows, sampleRows, obsRows] = await Promise.all([
    rows<{ start_date: string; q10: string }>(
      db,
      "SELECT DATE_FORMAT(s.start_date, '%Y-%m-%d') AS start_date, l.q10 FROM studies s JOIN labs l ON l.id = s.lab_id WHERE s.lab_id = ? AND s.id = ?",
      [labId, studyId],
    ),
    rows<{ id: number; lot_code: string; made_on: string | null; vid: number; vcode: string; vname: string }>(
      db,
      "SELECT b.id, b.lot_code, DATE_FORMAT(b.made_on, '%Y-%m-%d') AS made_on, v.id AS vid, v.code AS vcode, v.name AS vname " +
        'FROM study_batches sb JOIN batches b ON b.id = sb.batch_id JOIN variants v ON v.id = b.variant_id WHERE sb.study_id = ? AND b.lab_id = ? ORDER BY v.code, b.lot_code',
      [studyId, labId],
    ),
    rows<{ id: number; role: ConditionRole; condition_id: number; name: string; kind: ConditionKind; location: string; setpoint_c: string | null }>(
      db,
      'SELECT sc.id, sc.role, c.id AS condition_id, c.name, c.kind, c.location, c.setpoint_c ' +
        'FROM study_conditions sc JOIN storage_conditions c ON c.id = sc.condition_id WHERE sc.study_id = ? AND sc.lab_id = ? ORDER BY sc.position',
      [studyId, labId],
    ),
    rows<{ id: number; criterion: unknown; code: string; name: string; kind: AttributeRow['kind']; unit: string | null; decimals: number; scale: unknown }>(
      db,
      'SELECT sa.id, sa.criterion, a.code, a.name, a.kind, a.unit, a.decimals, a.scale ' +
        'FROM study_attributes sa JOIN attributes a ON a.id = sa.attribute_id WHERE sa.study_id = ? AND sa.lab_id = ? ORDER BY sa.position',
      [studyId, labId],
    ),
    rows<{ code: string; study_condition_id: number | null; batch_id: number }>(
      db,
      'SELECT code, study_condition_id, batch_id FROM samples WHERE lab_id = ? AND study_id = ? ORDER BY label_order',
      [labId, studyId],
    ),
    rows<{
      study_attribute_id: number;
      value_num: number | null;
      value_text: string | null;
      value_bool: number | null;
      verdict: string;
      cp_id: number;
      kind: string;
      label: string;
      due_date: string;
      offset_unit: string;
      offset_n: number;
      batch_id: number;
      study_condition_id: number | null;
      code: string;
    }>(
      db,
      "SELECT o.study_attribute_id, o.value_num, o.value_text, o.value_bool, o.verdict, c.id AS cp_id, c.kind, c.label, DATE_FORMAT(c.due_date, '%Y-%m-%d') AS due_date, " +
        'c.offset_unit, c.offset_n, s.batch_id, s.study_condition_id, s.code ' +
        'FROM observations o JOIN checkpoints c ON c.id = o.checkpoint_id JOIN samples s ON s.id = o.sample_id ' +
        'WHERE o.lab_id = ? AND o.study_id = ? AND o.voided = 0 ORDER BY c.due_date, o.id',
      [labId, studyId],
    ),
  ]);
  if (!study.length) throw notFound('No such study in your lab');
  return {
    startDate: study[0].start_date,
    labQ10: Number(study[0].q10),
    batches: batchRows.map((b) => ({ id: b.id, lotCode: b.lot_code, madeOn: b.made_on, variant: { id: b.vid, code: b.vcode, name: b.vname } })),
    conditions: condRows.map((c) => ({ id: c.id, conditionId: c.condition_id, name: c.name, kind: c.kind, location: c.location, setpointC: num(c.setpoint_c), role: c.role })),
    attrRows: attrRows.map(
      (r): AttrRow => ({
        sa: { id: r.id, criterion: json<Criterion>(r.criterion) },
        a: { code: r.code, name: r.name, kind: r.kind, unit: r.unit, decimals: r.decimals, scale: r.scale == null ? null : json<AttributeRow['scale']>(r.scale) },
      }),
    ),
    samples: sampleRows.map((r) => ({ code: r.code, studyConditionId: r.study_condition_id, batchId: r.batch_id })),
    obs: obsRows.map((r) => ({
      o: { studyAttributeId: r.study_attribute_id, valueNum: r.value_num, valueText: r.value_text, valueBool: r.value_bool == null ? null : r.value_bool === 1, verdict: r.verdict as SeriesPoint['verdict'] },
      cp: { id: r.cp_id, kind: r.kind, label: r.label, dueDate: r.due_date, offsetUnit: r.offset_unit, offsetN: r.offset_n },
      s: { batchId: r.batch_id, studyConditionId: r.study_condition_id, code: r.code },
    })),
  };
}

/** `q10`: the rate factor for projections; the lab's setting when omitted. */
export async function analyzeStudy(db: Db, labId: number, studyId: number, today: string, q10Asked?: number): Promise<StudyAnalysis> {
  const d = await analysisData(db, labId, studyId);
  const q10 = q10Asked ?? d.labQ10;
  // The chamber figures are read while the engine computes.
  const mktQuery = conditionMkts(db, labId, d.conditions.map((c) => c.conditionId), d.startDate, today);
  mktQuery.catch(() => undefined);
  const { attrRows, obs } = d;
  const attrOf = new Map(attrRows.map((x) => [x.sa.id, x]));
  const attrPosition = new Map(attrRows.map((x, i) => [x.sa.id, i]));

  const batchOf = new Map(d.batches.map((b) => [b.id, b]));
  const variants = [...new Map(d.batches.map((b) => [b.variant.id, b.variant])).values()].map((v) => ({
    ...v,
    lots: d.batches.filter((b) => b.variant.id === v.id).map((b) => b.lotCode),
  }));

  // ---------------------------------------------------------------- series
  // The initial test is t = 0 of every condition for its batch: its readings join each condition's series.
  const seriesMap = new Map<string, Series>();
  // Months from the start, once per checkpoint.
  const monthsByCp = new Map<number, number>();
  const monthsAt = (cp: (typeof obs)[number]['cp']) => {
    let m = monthsByCp.get(cp.id);
    if (m === undefined) monthsByCp.set(cp.id, (m = monthsOf(d.startDate, cp)));
    return m;
  };
  const initialValues = new Map<string, number[]>();
  for (const { o, cp, s } of obs) {
    const a = attrOf.get(o.studyAttributeId);
    const b = batchOf.get(s.batchId);
    if (!a || !b) continue;
    const value = o.verdict === 'not_done' ? null : valueOf(a.a.kind, o);
    const initial = cp.kind === 'initial';
    if (initial && typeof value === 'number') {
      const k = `${b.variant.id}:${o.studyAttributeId}`;
      const list = initialValues.get(k);
      if (list) list.push(value);
      else initialValues.set(k, [value]);
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
        months: initial ? 0 : monthsAt(cp),
        dueDate: cp.dueDate,
        value,
        verdict: o.verdict,
        sampleCode: s.code,
      });
    }
  }
  const series = [...seriesMap.values()];
  // Series by variant, attribute and condition (and by variant and condition, variant and attribute), for the lookups below.
  const group = (key: (x: Series) => string) => {
    const m = new Map<string, Series[]>();
    for (const x of series) {
      const k = key(x);
      const list = m.get(k);
      if (list) list.push(x);
      else m.set(k, [x]);
    }
    return (k: string) => m.get(k) ?? [];
  };
  const seriesVAC = group((x) => `${x.variantId}:${x.studyAttributeId}:${x.studyConditionId}`);
  const seriesVC = group((x) => `${x.variantId}:${x.studyConditionId}`);
  const seriesVA = group((x) => `${x.variantId}:${x.studyAttributeId}`);

  // ---------------------------------------------------------------- limits per variant and attribute
  // A change criterion's limits come from the variant's mean initial reading (a study recorded before
  // the initial test existed: its day-0 readings).
  const limits: StudyAnalysis['limits'] = [];
  for (const v of variants) {
    for (const { sa, a } of attrRows) {
      if (a.kind !== 'measured') continue;
      const day0 =
        initialValues.get(`${v.id}:${sa.id}`) ??
        seriesVA(`${v.id}:${sa.id}`)
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
      const pts = seriesVAC(`${l.variantId}:${l.studyAttributeId}:${c.id}`)
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
    const initialIds = new Set(obs.filter((x) => x.cp.kind === 'initial').map((x) => x.cp.id));
    for (const s of d.samples) {
      if (s.studyConditionId == null) continue;
      // This sample's own readings, and its batch's initial test as the reference.
      const pick = (id: number) =>
        series
          .find((x) => x.studyAttributeId === id && x.studyConditionId === s.studyConditionId && x.batchId === s.batchId)
          ?.points.filter((p) => p.sampleCode === s.code || initialIds.has(p.checkpointId))
          // One point per checkpoint (a batch with several retained samples has several initial readings): filtered first, then the first kept.
          .filter((p, i, mine) => mine.findIndex((q) => q.checkpointId === p.checkpointId) === i) ?? [];
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

  deltaE.push(...(await photoDeltaESeries(db, labId, studyId, d.startDate, deltaE)));

  // ---------------------------------------------------------------- first failure per variant and condition
  const initialCheckpoints = new Set(obs.filter((x) => x.cp.kind === 'initial').map((x) => x.cp.id));
  const firstFailures: StudyAnalysis['firstFailures'] = [];
  for (const v of variants) {
    for (const c of d.conditions) {
      const own = seriesVC(`${v.id}:${c.id}`);
      const fails = own
        .flatMap((x) => x.points.filter((p) => p.verdict === 'fail').map((p) => ({ p, attr: attrOf.get(x.studyAttributeId)!.a.name, position: attrPosition.get(x.studyAttributeId)! })));
      const first = fails.sort((a, b) => a.p.months - b.p.months)[0];
      firstFailures.push({
        variantId: v.id,
        studyConditionId: c.id,
        label: first?.p.label ?? null,
        months: first?.p.months ?? null,
        // In the study's attribute order.
        attributes: first ? [...new Set(fails.filter((f) => f.p.months === first.p.months).sort((x, y) => x.position - y.position).map((f) => f.attr))] : [],
        // Judged readings of the condition's own pulls, as the gates count them: the initial test is
        // no result of the condition, so a condition with none says "no results yet", not "no failures".
        dataPoints: own.reduce((n, x) => n + x.points.filter((p) => !initialCheckpoints.has(p.checkpointId) && (p.verdict === 'pass' || p.verdict === 'fail')).length, 0),
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
        observations: seriesVAC(`${v.id}:${sa.id}:${c.id}`)
          .flatMap((x) =>
            x.points.map((p) => ({
              months: p.months,
              batch: x.lotCode,
              value: typeof p.value === 'number' && a.kind === 'measured' ? p.value : null,
              passed: p.verdict === 'pass' ? true : p.verdict === 'fail' ? false : null,
              initial: initialCheckpoints.has(p.checkpointId),
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

  const mkts = await mktQuery;
  const conditionsOut = d.conditions.map((c) => ({
    id: c.id,
    name: c.name,
    kind: c.kind,
    role: c.role,
    setpointC: c.setpointC,
    location: c.location,
    mkt: mktOut(mkts.get(c.conditionId), d.startDate, today),
  }));

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
