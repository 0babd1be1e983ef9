/**
 * Suggested shelf life for one variant: the smallest of
 *  - regression figures (ICH Q1E Appendix B) per attribute at each real-time
 *    condition, capped by the ICH Q1E extrapolation limit,
 *  - the last real-time checkpoint that passed, where a real-time result failed,
 *  - Q10 projections from each accelerated condition (from its last checkpoint
 *    that still passed),
 * floored to whole months, with a table of reasons. Failures at freeze-thaw,
 * centrifuge and light conditions are gates, not figures: they block release or
 * add a storage instruction. Where a measured attribute changes at 3 or more
 * temperatures an Arrhenius fit is shown beside the rule-of-thumb Q10.
 *
 * Convention: 1 month = 365.25/12 = 30.4375 days; 1 week = 7 days.
 * Pure functions: no I/O, no clock.
 */
import type { AttributeKind } from './criteria';
import { extrapolationCap, type StorageClass } from './extrapolation';
import { labelDating, type LabelDating } from './label';
import { arrheniusFit, projectWithQ10 } from './q10';
import { linearFit } from './regression';
import { shelfLifeMultiBatch, type AcceptanceLimit, type BatchPoint, type MultiBatchOptions } from './shelf-life';

/** Days per month by the convention used throughout (365.25 / 12). */
export const DAYS_PER_MONTH = 365.25 / 12;

/** Days to months (1 month = 30.4375 days). */
export function daysToMonths(days: number): number {
  return days / DAYS_PER_MONTH;
}

/** Weeks to months (1 week = 7 days, 1 month = 30.4375 days). */
export function weeksToMonths(weeks: number): number {
  return (weeks * 7) / DAYS_PER_MONTH;
}

export type ConditionKind = 'constant' | 'cycling' | 'light' | 'mechanical';
/** A control (usually a fridge) is the reference the others are compared with: never projected from, its failures only noted. */
export type ConditionRole = 'real_time' | 'accelerated' | 'stress' | 'control';

/** One sample's result at one checkpoint. */
export interface SuggestObservation {
  /** Months since the study start (see daysToMonths / weeksToMonths). For cycling, light and mechanical conditions any time will do. */
  months: number;
  /** Batch (lot) code; results without one are treated as one batch. */
  batch?: string | null;
  /** The measured number, for measured attributes. */
  value?: number | null;
  /** Pass or fail against the acceptance criterion; null while not judged. */
  passed: boolean | null;
  /** A reading of the study's initial test (t = 0 of every condition), not of a pull of this condition. */
  initial?: boolean;
}

export interface SuggestAttribute {
  name: string;
  kind: AttributeKind;
  /**
   * Absolute acceptance limits used for regression (measured attributes only).
   * Resolve relative criteria (e.g. within ±0.5 of the day-0 value) to absolute
   * limits before calling.
   */
  limit?: AcceptanceLimit | null;
  observations: readonly SuggestObservation[];
}

export interface SuggestCondition {
  name: string;
  kind: ConditionKind;
  role: ConditionRole;
  /** Setpoint °C for constant conditions. */
  setpointC?: number | null;
  /** Lowest temperature of a cycling condition, °C (words the default instruction). */
  lowC?: number | null;
  /**
   * What a failure here means. Defaults: cycling and light -> a storage
   * instruction; mechanical -> block; a constant stress condition -> a note only.
   */
  onFailure?: 'block' | 'storage_instruction' | 'note';
  /** Wording of the storage instruction; defaults per kind ("Protect from freezing.", "Protect from light."). */
  instruction?: string | null;
  attributes: readonly SuggestAttribute[];
}

export interface SuggestInput {
  /** Storage class of the label (drives the ICH Q1E extrapolation rule), default 'room'. */
  storage?: StorageClass;
  /** Label storage temperature °C; default the first real-time constant setpoint, else 25 / 5 / -20 °C by storage class. */
  storageTempC?: number | null;
  /** Q10 factor for projections, default 2 (common practice). */
  q10?: number | null;
  conditions: readonly SuggestCondition[];
  /** Made date 'YYYY-MM-DD' of the batch to label (for the best-before date). */
  madeDate?: string | null;
  periodAfterOpeningMonths?: number | null;
  /** Long-term and accelerated data show little change and variability (ICH Q1E), default false. */
  lowVariability?: boolean;
  /** Override; by default any failed result at an accelerated condition counts as significant change. */
  acceleratedSignificantChange?: boolean | null;
  /** Options for the regression (confidence, limit rounding, pooling alpha, horizon). */
  shelfLife?: MultiBatchOptions;
}

export type ReasonMethod = 'regression' | 'observed' | 'q10' | 'arrhenius' | 'gate';

const METHOD_NAMES: Readonly<Record<ReasonMethod, string>> = {
  regression: 'Regression (ICH Q1E)',
  observed: 'Last passing checkpoint (real time)',
  q10: 'Q10 projection',
  arrhenius: 'Arrhenius fit',
  gate: 'Stress test gate',
};

/** How a reason was reached, in words, the same on every page and in the PDF. */
export function reasonMethodName(r: { method: ReasonMethod; gateOf?: 'control' | 'stress' }): string {
  return r.method === 'gate' && r.gateOf === 'control' ? 'Control (reference)' : (METHOD_NAMES[r.method] ?? r.method);
}

/**
 * What the gate lines of one kind say together, only what is true: "no failures (45 °C oven)" for
 * conditions with results and none failed, "no results yet (Freeze-thaw)" for those without any;
 * null when there is no such line or one failed (the gates list says so).
 */
export function gateSummary(reasons: readonly SuggestReason[], of: 'stress' | 'control'): string | null {
  const lines = reasons.filter((r) => r.method === 'gate' && (r.gateOf === 'control') === (of === 'control'));
  if (!lines.length || lines.some((r) => r.attribute !== 'all attributes')) return null;
  const checked = lines.filter((r) => r.dataPoints > 0).map((r) => r.condition);
  const waiting = lines.filter((r) => r.dataPoints === 0).map((r) => r.condition);
  const parts = [checked.length ? `no failures (${checked.join(', ')})` : '', waiting.length ? `no results yet (${waiting.join(', ')})` : ''].filter(Boolean);
  return `${of === 'control' ? 'Control' : 'Stress tests'}: ${parts.join('; ')}.`;
}

export interface SuggestReason {
  attribute: string;
  condition: string;
  method: ReasonMethod;
  /** Results used. */
  dataPoints: number;
  /** The figure this line contributes, months; null when it gives none. */
  figureMonths: number | null;
  rule: string;
  message: string;
  /** Gate lines: whether the condition is a control or a stress test. */
  gateOf?: 'control' | 'stress';
  /** Regression lines: the figure was cut to the extrapolation limit (too little real-time data), not the trend's. */
  capped?: boolean;
  /** Q10 lines: projected from the last checkpoint that passed, because a later one failed. */
  afterFailure?: boolean;
}

export interface SuggestGate {
  condition: string;
  kind: ConditionKind;
  /** Attributes that failed. */
  attributes: string[];
  outcome: 'block' | 'storage_instruction' | 'note';
  instruction: string | null;
  message: string;
}

export interface SuggestResult {
  /** Smallest figure floored to whole months; null when there is none. */
  months: number | null;
  basis: 'real_time' | 'projection_only' | 'none';
  confidenceNote: string;
  /** Index in `reasons` of the figure that governs, or null. */
  governingReason: number | null;
  reasons: SuggestReason[];
  gates: SuggestGate[];
  /** True when a gate blocks release. */
  blocked: boolean;
  storageInstructions: string[];
  labelDating: LabelDating | null;
  caution: string;
}

export const SUGGEST_CAUTION =
  'A suggested shelf life supports, and does not replace, the judgement of a qualified safety assessor and the microbiological tests (preservative efficacy, ISO 11930) the lab must run.';

const DEFAULT_STORAGE_TEMP: Record<StorageClass, number> = { room: 25, refrigerated: 5, frozen: -20 };

const f2 = (x: number): string => x.toFixed(2);

function judged(obs: readonly SuggestObservation[]): SuggestObservation[] {
  return obs.filter((o) => Number.isFinite(o.months) && o.passed !== null && o.passed !== undefined);
}

/** First failing time and the last checkpoint time before it (null when none passed), over the judged results. */
function lastPassing(obs: readonly SuggestObservation[]): { firstFail: number | null; lastPass: number | null } {
  const j = judged(obs);
  const fails = j.filter((o) => o.passed === false).map((o) => o.months);
  const firstFail = fails.length ? Math.min(...fails) : null;
  const before = j.filter((o) => firstFail === null || o.months < firstFail).map((o) => o.months);
  return { firstFail, lastPass: before.length ? Math.max(...before) : null };
}

const GATE_RULE = 'Stress test gate: a failure gives a flag, not a figure.';
const CONTROL_RULE = 'Control: the reference the other conditions are compared with; a failure is noted, not a figure.';

function defaultGate(c: SuggestCondition): { outcome: SuggestGate['outcome']; instruction: string | null } {
  const outcome =
    c.onFailure ??
    (c.role === 'control' ? 'note' : c.kind === 'cycling' || c.kind === 'light' ? 'storage_instruction' : c.kind === 'mechanical' ? 'block' : 'note');
  if (outcome !== 'storage_instruction') return { outcome, instruction: null };
  const fallback =
    c.kind === 'light'
      ? 'Protect from light.'
      : c.kind === 'cycling' && c.lowC != null && c.lowC > 0
        ? 'Avoid large temperature swings.'
        : c.kind === 'cycling'
          ? 'Protect from freezing.'
          : 'Store as the label directs.';
  return { outcome, instruction: c.instruction ?? fallback };
}

/** Suggest a shelf life for one variant from all its study conditions. */
export function suggestShelfLife(input: SuggestInput): SuggestResult {
  const storage = input.storage ?? 'room';
  const q10 = input.q10 ?? 2;
  const opts = input.shelfLife ?? {};
  const conditions = input.conditions;
  const firstRealTime = conditions.find(
    (c) => c.role === 'real_time' && c.kind === 'constant' && c.setpointC != null && Number.isFinite(c.setpointC),
  );
  const storageTempC = input.storageTempC ?? firstRealTime?.setpointC ?? DEFAULT_STORAGE_TEMP[storage];
  const acceleratedSignificantChange =
    input.acceleratedSignificantChange ??
    conditions.some((c) => c.role === 'accelerated' && c.attributes.some((a) => judged(a.observations).some((o) => o.passed === false)));
  const reasons: SuggestReason[] = [];
  const gates: SuggestGate[] = [];

  for (const c of conditions) {
    const isGate = c.kind !== 'constant' || c.role === 'stress' || c.role === 'control';
    if (isGate) {
      const rule = c.role === 'control' ? CONTROL_RULE : GATE_RULE;
      const gateOf = c.role === 'control' ? ('control' as const) : ('stress' as const);
      // A gate judges the condition's own pulls: the initial test is no result of a stress test or the control.
      const own = (a: SuggestAttribute) => judged(a.observations).filter((o) => !o.initial);
      const failed = c.attributes.filter((a) => own(a).some((o) => o.passed === false));
      const n = c.attributes.reduce((s, a) => s + own(a).length, 0);
      if (failed.length > 0) {
        const { outcome, instruction } = defaultGate(c);
        const names = failed.map((a) => a.name);
        const effect =
          outcome === 'block'
            ? 'release is blocked until the failure is resolved'
            : outcome === 'storage_instruction'
              ? `the label needs: ${(instruction ?? '').replace(/\.$/, '')}`
              : 'noted for review; no effect on the figure';
        const message = `${c.name}: ${names.join(', ')} failed; ${effect}.`;
        gates.push({ condition: c.name, kind: c.kind, attributes: names, outcome, instruction, message });
        reasons.push({ attribute: names.join(', '), condition: c.name, method: 'gate', dataPoints: n, figureMonths: null, rule, message, gateOf });
      } else {
        reasons.push({
          attribute: 'all attributes',
          condition: c.name,
          method: 'gate',
          dataPoints: n,
          figureMonths: null,
          rule,
          gateOf,
          message: n > 0 ? `${c.name}: all results passed.` : `${c.name}: no results yet.`,
        });
      }
      continue;
    }

    if (c.role === 'real_time') {
      for (const a of c.attributes) {
        const { firstFail, lastPass } = lastPassing(a.observations);
        if (firstFail !== null) {
          const figure = lastPass ?? 0;
          reasons.push({
            attribute: a.name,
            condition: c.name,
            method: 'observed',
            dataPoints: judged(a.observations).length,
            figureMonths: figure,
            rule: 'A real-time failure caps the shelf life at the last checkpoint that passed.',
            message:
              lastPass === null
                ? `Failed at the first checkpoint (${f2(firstFail)} months).`
                : `Failed at ${f2(firstFail)} months; last passing checkpoint ${f2(lastPass)} months.`,
          });
        }
        if (a.kind !== 'measured') continue;
        const points: BatchPoint[] = a.observations
          .filter((o) => Number.isFinite(o.months) && o.value != null && Number.isFinite(o.value))
          .map((o) => ({ batch: o.batch ?? 'all', t: o.months, y: o.value as number }));
        const hasLimit = a.limit != null && (a.limit.lower != null || a.limit.upper != null);
        if (!hasLimit) {
          if (points.length > 0) {
            reasons.push({
              attribute: a.name,
              condition: c.name,
              method: 'regression',
              dataPoints: points.length,
              figureMonths: null,
              rule: 'ICH Q1E Appendix B regression needs a numeric acceptance limit.',
              message: 'No numeric limit given, so no regression figure.',
            });
          }
          continue;
        }
        if (points.length === 0) continue;
        const r = shelfLifeMultiBatch(points, a.limit as AcceptanceLimit, opts);
        const X = Math.max(...points.map((p) => p.t));
        const cap = extrapolationCap({
          realTimeMonths: X,
          storage,
          acceleratedSignificantChange,
          lowVariability: input.lowVariability ?? false,
          statisticsSupport: true,
        });
        const separate = opts.separateFit === 'each_alone' ? 'each batch fitted alone' : 'separate intercepts and slopes in one model (common mean square error)';
        const regRule = `ICH Q1E Appendix B: ${r.model === 'pooled' ? 'pooled line' : r.model === 'common_slope' ? 'common slope, batch intercepts' : separate}, one-sided confidence bound of the mean meets the limit.`;
        let figure: number | null = null;
        let capped = false;
        let rule = regRule;
        // The figure's message, then what a reader should see beside it: a warning, the other way of fitting separate lines.
        let message = [r.message, r.warning, r.alternative ? `Beside it: ${r.alternative.message}` : null].filter(Boolean).join(' ');
        const horizon = r.horizonMonths ?? opts.maxMonths ?? 60;
        if (r.status === 'fails_at_start') figure = 0;
        else if (r.status === 'crossed' || r.status === 'not_reached') {
          const raw = r.status === 'crossed' ? (r.months as number) : horizon;
          if (cap.capMonths !== null && cap.capMonths < raw) {
            figure = cap.capMonths;
            capped = true;
            rule = `${regRule} Capped: ${cap.rule}`;
            message = `${message} Capped at ${f2(cap.capMonths)} months with ${f2(X)} months of real-time data.`;
          } else {
            figure = raw;
          }
        }
        reasons.push({ attribute: a.name, condition: c.name, method: 'regression', dataPoints: points.length, figureMonths: figure, rule, message, capped });
      }
      continue;
    }

    // Accelerated, constant: Q10 projection from the last checkpoint that passed.
    const all = c.attributes.flatMap((a) => judged(a.observations).map((o) => ({ ...o, attribute: a.name })));
    const q10Rule = `Q10 rule of thumb (common practice, no published source): time at ${storageTempC} °C ≈ time at the accelerated temperature × Q10^(ΔT/10), Q10 = ${q10}.`;
    if (c.setpointC == null || !Number.isFinite(c.setpointC)) {
      reasons.push({ attribute: 'all attributes', condition: c.name, method: 'q10', dataPoints: all.length, figureMonths: null, rule: q10Rule, message: 'No setpoint temperature, so no projection.' });
      continue;
    }
    if (c.setpointC <= storageTempC) {
      reasons.push({ attribute: 'all attributes', condition: c.name, method: 'q10', dataPoints: all.length, figureMonths: null, rule: q10Rule, message: `${c.setpointC} °C is not above the storage temperature ${storageTempC} °C, so no projection.` });
      continue;
    }
    if (all.length === 0) {
      reasons.push({ attribute: 'all attributes', condition: c.name, method: 'q10', dataPoints: 0, figureMonths: null, rule: q10Rule, message: 'No results yet.' });
      continue;
    }
    const { firstFail, lastPass } = lastPassing(all);
    if (firstFail === null && (lastPass === null || lastPass <= 0)) {
      reasons.push({ attribute: 'all attributes', condition: c.name, method: 'q10', dataPoints: all.length, figureMonths: null, rule: q10Rule, message: 'Only day-0 results so far, so no projection yet.' });
      continue;
    }
    const failedNames = firstFail === null ? [] : [...new Set(all.filter((o) => o.months === firstFail && o.passed === false).map((o) => o.attribute))];
    const used = all.filter((o) => lastPass !== null && o.months <= lastPass).length;
    const passedFor = lastPass ?? 0;
    const proj = projectWithQ10({ months: passedFor, tAccC: c.setpointC, tStoreC: storageTempC, q10 });
    const lead =
      firstFail === null
        ? `All results passed through ${f2(passedFor)} months at ${c.setpointC} °C.`
        : lastPass === null
          ? `${failedNames.join(', ')} failed at the first checkpoint (${f2(firstFail)} months).`
          : `${failedNames.join(', ')} failed at ${f2(firstFail)} months; last passing checkpoint ${f2(passedFor)} months.`;
    reasons.push({
      attribute: firstFail === null ? 'all attributes' : failedNames.join(', '),
      condition: c.name,
      method: 'q10',
      dataPoints: used,
      figureMonths: proj.months,
      rule: q10Rule,
      message: `${lead} ${proj.message}`,
      afterFailure: firstFail !== null,
    });
  }

  reasons.push(...arrheniusReasons(conditions, storageTempC, q10));

  // Combine.
  let governingReason: number | null = null;
  for (let i = 0; i < reasons.length; i += 1) {
    const fig = reasons[i].figureMonths;
    if (fig === null || !Number.isFinite(fig)) continue;
    if (governingReason === null || fig < (reasons[governingReason].figureMonths as number)) governingReason = i;
  }
  const gov = governingReason === null ? null : reasons[governingReason];
  const months = gov === null ? null : Math.max(0, Math.floor((gov.figureMonths as number) + 1e-9));
  const realTimeFigure = reasons.some((r) => (r.method === 'regression' || r.method === 'observed') && r.figureMonths !== null);
  const basis: SuggestResult['basis'] = realTimeFigure ? 'real_time' : gov ? 'projection_only' : 'none';
  const blocked = gates.some((g) => g.outcome === 'block');
  const storageInstructions = [...new Set(gates.filter((g) => g.instruction).map((g) => g.instruction as string))];
  let confidenceNote: string;
  if (basis === 'none') {
    const anyResult = conditions.some((c) => c.attributes.some((a) => judged(a.observations).length > 0));
    // Shown after the basis label "No figure yet", so it does not repeat it.
    confidenceNote = anyResult
      ? 'Record more checkpoints: at least 3 results at 2 or more times at real time, or an accelerated condition.'
      : 'No results yet: record the initial test and the first pulls.';
  } else if (basis === 'projection_only') {
    confidenceNote = 'From a rule of thumb, not a prediction: verify with real-time data.';
  } else {
    confidenceNote =
      gov && gov.method === 'q10'
        ? 'Based on real-time data, but an accelerated projection gives the shortest figure and governs.'
        : 'Based on real-time data at the storage condition.';
  }
  if (blocked) confidenceNote += ' A stress test failure blocks release.';

  const label =
    months !== null && months >= 1
      ? labelDating({ shelfLifeMonths: months, madeDate: input.madeDate ?? null, periodAfterOpeningMonths: input.periodAfterOpeningMonths ?? null })
      : null;

  return {
    months,
    basis,
    confidenceNote,
    governingReason,
    reasons,
    gates,
    blocked,
    storageInstructions,
    labelDating: label,
    caution: SUGGEST_CAUTION,
  };
}

/**
 * Arrhenius lines: for each measured attribute with a straight-line rate at
 * 3 or more constant temperatures, fit ln |slope| against 1/T. Informational:
 * figure null.
 */
function arrheniusReasons(conditions: readonly SuggestCondition[], storageTempC: number, q10: number): SuggestReason[] {
  const byAttr = new Map<string, { tempC: number; slope: number; n: number; condition: string }[]>();
  for (const c of conditions) {
    if (c.kind !== 'constant' || c.setpointC == null || !Number.isFinite(c.setpointC)) continue;
    for (const a of c.attributes) {
      if (a.kind !== 'measured') continue;
      const pts = a.observations
        .filter((o) => Number.isFinite(o.months) && o.value != null && Number.isFinite(o.value))
        .map((o) => ({ x: o.months, y: o.value as number }));
      const fit = linearFit(pts);
      if (!fit) continue;
      const list = byAttr.get(a.name) ?? [];
      list.push({ tempC: c.setpointC, slope: fit.slope, n: pts.length, condition: c.name });
      byAttr.set(a.name, list);
    }
  }
  const out: SuggestReason[] = [];
  for (const [name, list] of byAttr) {
    const temps = new Set(list.map((l) => l.tempC));
    if (temps.size < 3) continue;
    const rule = 'Arrhenius: ln k against 1/T (kelvin), k = rate of change of the attribute (|slope|); shown beside the rule-of-thumb Q10.';
    const condition = list.map((l) => l.condition).join(', ');
    const dataPoints = list.reduce((s, l) => s + l.n, 0);
    const signs = new Set(list.map((l) => Math.sign(l.slope)));
    if (signs.has(0) || signs.size > 1) {
      out.push({ attribute: name, condition, method: 'arrhenius', dataPoints, figureMonths: null, rule, message: 'The attribute does not change in the same direction at every temperature, so no Arrhenius fit.' });
      continue;
    }
    const fit = arrheniusFit(
      list.map((l) => ({ tempC: l.tempC, k: Math.abs(l.slope) })),
      { fromC: storageTempC, toC: storageTempC + 10 },
    );
    const extra = fit.q10 !== null ? ` Rule of thumb in use: Q10 = ${q10}.` : '';
    out.push({ attribute: name, condition, method: 'arrhenius', dataPoints, figureMonths: null, rule, message: `${fit.message}${extra}` });
  }
  return out;
}
