/**
 * Regression shelf life per ICH Q1E (2003), Appendix B: the shelf life is the
 * earliest time at which the one-sided 95 % confidence bound of the mean
 * regression line meets the acceptance limit (lower bound against a lower
 * limit, upper bound against an upper limit; for a two-sided acceptance range,
 * two-sided 95 % limits, i.e. 97.5 % on each side). Several batches are
 * first tested for poolability by ANCOVA at the 0.25 significance level.
 *
 * Times are in months. Pure functions: no I/O, no clock.
 */
import {
  boundWithT,
  fSurvival,
  linearFit,
  tQuantile,
  type LinearFit,
  type MeanLine,
} from './regression';

/** One result at one time for one batch. */
export interface BatchPoint {
  batch: string;
  /** Months since the start of the study. */
  t: number;
  y: number;
}

/** One result at one time (batch not needed). */
export interface TimePoint {
  t: number;
  y: number;
}

/**
 * Acceptance limit(s) of one attribute. Give `lower`, `upper` or both.
 * `decimals` is the number of decimals the limit is written with (95.0 -> 1);
 * it matters only with `limitRounding: 'to_limit_decimals'`.
 */
export interface AcceptanceLimit {
  lower?: number | null;
  upper?: number | null;
  decimals?: number | null;
}

/**
 * How a bound is compared with the limit.
 * - 'none' (default): the bound meets the limit where it equals it exactly
 *   (LeBlond 2011 pooled example: 25.9958 months against 95.0).
 * - 'to_limit_decimals': the bound is first rounded (half up) to the limit's
 *   decimals, as results are reported, and meets the limit only when the rounded
 *   value falls outside it. For a lower limit 95.0 that is bound < 94.95; for an
 *   upper limit 0.50 it is bound ≥ 0.505. This gives a slightly later time
 *   (26.2241 months for the LeBlond example). When `decimals` is not given it is
 *   taken from the limit's shortest decimal form, so 95.0 passed as the number
 *   95 counts as 0 decimals: pass `decimals: 1` explicitly.
 */
export type LimitRounding = 'none' | 'to_limit_decimals';

/**
 * Which confidence level each side uses.
 * - 'auto' (default): two-sided (97.5 % each side for confidence 0.95) when both
 *   limits are given, one-sided otherwise, as ICH Q1E describes.
 * - 'one_sided': one-sided `confidence` on each limit given (direction known).
 * - 'two_sided': (1 + confidence)/2 on each limit given.
 */
export type Sidedness = 'auto' | 'one_sided' | 'two_sided';

export interface ShelfLifeOptions {
  /** Overall confidence, default 0.95. Must lie in [0.5, 1). */
  confidence?: number;
  sided?: Sidedness;
  /**
   * Search horizon in months. Default: as far as the data and the extrapolation rule allow,
   * max(60, 2 × the last time with data) (ICH Q1E never extrapolates beyond 2X; the cap itself is
   * applied afterwards, apart from the search, see extrapolation.ts).
   */
  maxMonths?: number;
  limitRounding?: LimitRounding;
}

/** The default search horizon for data reaching `tMax` months: max(60, 2 × tMax). */
export function searchHorizon(tMax: number): number {
  return Math.max(DEFAULT_MAX_MONTHS, Number.isFinite(tMax) ? 2 * tMax : 0);
}

export type ShelfLifeStatus =
  | 'crossed'
  | 'not_reached'
  | 'fails_at_start'
  | 'insufficient_data'
  | 'invalid_input';

export interface ShelfLifeResult {
  /** Months to the crossing; 0 when the bound is outside the limit at t = 0; null otherwise. */
  months: number | null;
  status: ShelfLifeStatus;
  message: string;
  /** Which limit governed (the one met first), or null. */
  governingSide: 'lower' | 'upper' | null;
  /** One-sided confidence level used on each side (0.95 or 0.975 by default). */
  levelPerSide: number | null;
  /** Student t multiplier used, or null. */
  tValue: number | null;
  /** The mean line the bound was put on, or null. */
  line: MeanLine | null;
  /** The search horizon used, months ("not reached within N months"). */
  horizonMonths: number | null;
  /** Something a reader should check, e.g. results lying exactly on a line. */
  warning?: string;
}

/** Default search horizon in months. */
export const DEFAULT_MAX_MONTHS = 60;

const fmt = (x: number, digits = 2): string => x.toFixed(digits);

function decimalsOf(x: number): number {
  const s = String(x);
  if (/e/i.test(s)) return 0;
  const dot = s.indexOf('.');
  return dot < 0 ? 0 : s.length - dot - 1;
}

/** Why the time points cannot support a regression, or null when they can. */
export function shelfLifeDataProblem(points: readonly TimePoint[]): string | null {
  if (points.some((p) => !Number.isFinite(p.t) || !Number.isFinite(p.y))) {
    return 'some results or times are missing or not finite numbers';
  }
  const n = points.length;
  if (n === 0) return 'no results';
  const times = new Set(points.map((p) => p.t));
  // Results at one time cannot show a trend, however many there are: they need a second time, not "more".
  if (times.size < 2) {
    return n === 1
      ? `one result (at ${points[0].t} months); needs results at 2 or more times and at least 3 in all`
      : `all ${n} results are at one time (${points[0].t} months); needs results at 2 or more times`;
  }
  if (n < 3) {
    return `${n} results at ${times.size} times fix a line exactly and leave nothing to estimate its spread; needs at least 3 results`;
  }
  return null;
}

interface ResolvedLimits {
  lower: number | null;
  upper: number | null;
  /** Limits as actually compared (shifted by half a unit of the last decimal when rounding). */
  lowerEff: number | null;
  upperEff: number | null;
  levelPerSide: number;
  maxMonths: number;
}

function resolve(limit: AcceptanceLimit, opts: ShelfLifeOptions, tMax = 0): ResolvedLimits | string {
  const confidence = opts.confidence ?? 0.95;
  const maxMonths = opts.maxMonths ?? searchHorizon(tMax);
  const sided = opts.sided ?? 'auto';
  const rounding = opts.limitRounding ?? 'none';
  const lower = limit.lower ?? null;
  const upper = limit.upper ?? null;
  if (!Number.isFinite(confidence) || confidence < 0.5 || confidence >= 1) {
    return `confidence must be at least 0.5 and below 1; got ${confidence}`;
  }
  if (!Number.isFinite(maxMonths) || maxMonths <= 0) {
    return `the search horizon must be a positive number of months; got ${maxMonths}`;
  }
  if (lower === null && upper === null) return 'no acceptance limit given (lower, upper or both)';
  if ((lower !== null && !Number.isFinite(lower)) || (upper !== null && !Number.isFinite(upper))) {
    return 'acceptance limits must be finite numbers';
  }
  if (lower !== null && upper !== null && lower >= upper) {
    return `the lower limit (${lower}) must be below the upper limit (${upper})`;
  }
  if (limit.decimals != null && (!Number.isInteger(limit.decimals) || limit.decimals < 0 || limit.decimals > 12)) {
    return `limit decimals must be a whole number from 0 to 12; got ${limit.decimals}`;
  }
  const twoSided = sided === 'two_sided' || (sided === 'auto' && lower !== null && upper !== null);
  const levelPerSide = twoSided ? 1 - (1 - confidence) / 2 : confidence;
  const half = (x: number): number => {
    const d = limit.decimals ?? decimalsOf(x);
    return 0.5 * 10 ** -d;
  };
  const lowerEff = lower === null ? null : rounding === 'to_limit_decimals' ? lower - half(lower) : lower;
  const upperEff = upper === null ? null : rounding === 'to_limit_decimals' ? upper + half(upper) : upper;
  return { lower, upper, lowerEff, upperEff, levelPerSide, maxMonths };
}

function emptyResult(status: ShelfLifeStatus, message: string, line: MeanLine | null = null): ShelfLifeResult {
  return { months: null, status, message, governingSide: null, levelPerSide: null, tValue: null, line, horizonMonths: null };
}

interface SideCrossing {
  side: 'lower' | 'upper';
  /** null when not reached within the horizon. */
  months: number | null;
  atStart: boolean;
}

/**
 * Earliest t in [0, maxMonths] where the bound leaves the effective limit. Limits are inclusive, as
 * in the recording criteria (shared/compute/criteria.ts): a bound exactly on the limit is still
 * inside; with `to_limit_decimals` an upper bound rounding half up onto the next digit is outside
 * (bound ≥ limit + half a unit), a lower one only below limit - half a unit.
 * The margin (lower bound - limit, or limit - upper bound) is concave in t, so once inside at 0 it
 * changes sign at most once on [0, ∞): bisection on [0, maxMonths] finds that crossing to about
 * 1e-10 months.
 */
function crossing(line: MeanLine, t: number, side: 'lower' | 'upper', limitEff: number, maxMonths: number, halfUpUpper: boolean): SideCrossing {
  const margin = (x: number): number =>
    side === 'lower' ? boundWithT(line, x, t, 'lower') - limitEff : limitEff - boundWithT(line, x, t, 'upper');
  const outside = (m: number) => (side === 'upper' && halfUpUpper ? m <= 0 : m < 0);
  if (outside(margin(0))) return { side, months: 0, atStart: true };
  if (!outside(margin(maxMonths))) return { side, months: null, atStart: false };
  let lo = 0;
  let hi = maxMonths;
  for (let i = 0; i < 200 && hi - lo > 1e-10; i += 1) {
    const mid = (lo + hi) / 2;
    if (!outside(margin(mid))) lo = mid;
    else hi = mid;
  }
  return { side, months: (lo + hi) / 2, atStart: false };
}

/** A number as used, without binary noise (4.985, not 4.99 nor 4.984999999999999). */
export function limitValueText(x: number): string {
  return String(Math.round(x * 1e10) / 1e10);
}

function limitText(r: ResolvedLimits, side: 'lower' | 'upper', limit: AcceptanceLimit): string {
  const value = side === 'lower' ? r.lower : r.upper;
  // The limit as compared, at the precision used: its written decimals (95.0), or every digit it has
  // when it has more (a limit computed from a mean, 4.985, is never shown as 4.99).
  const d = limit.decimals;
  const shown = value === null ? '' : d != null && Number(value.toFixed(d)) === value ? value.toFixed(d) : limitValueText(value);
  const rounded =
    (r.lowerEff !== r.lower || r.upperEff !== r.upper) ? ' (bound rounded to the limit\'s decimals first)' : '';
  return `${side} limit ${shown}${rounded}`;
}

function isLine(x: MeanLine | readonly TimePoint[]): x is MeanLine {
  return !Array.isArray(x);
}

/**
 * Shelf life for one attribute from one mean line (or from the time points,
 * which are fitted first). Never returns NaN or Infinity: problems come back
 * as a status with a message.
 */
export function shelfLifeSingle(
  data: MeanLine | readonly TimePoint[],
  limit: AcceptanceLimit,
  opts: ShelfLifeOptions & { /** For a given line: the last time with data (sets the default horizon). */ dataTMax?: number } = {},
): ShelfLifeResult {
  const tMax = isLine(data) ? (opts.dataTMax ?? data.xMean) : Math.max(0, ...data.map((p) => p.t).filter(Number.isFinite));
  const r = resolve(limit, opts, tMax);
  if (typeof r === 'string') return emptyResult('invalid_input', r);
  let line: MeanLine;
  if (isLine(data)) {
    line = data;
  } else {
    const problem = shelfLifeDataProblem(data);
    if (problem) return emptyResult('insufficient_data', problem);
    const fit = linearFit(data.map((p) => ({ x: p.t, y: p.y })));
    if (!fit) return emptyResult('insufficient_data', 'the results could not be fitted');
    line = fit;
  }
  const lineOk =
    [line.intercept, line.slope, line.residualSD, line.xMean, line.sxx, line.n, line.df].every(Number.isFinite) &&
    line.df >= 1 &&
    line.sxx > 0 &&
    line.n > 0 &&
    line.residualSD >= 0;
  if (!lineOk) {
    return emptyResult(
      'insufficient_data',
      'the fitted line has no residual degrees of freedom or no spread in time; needs at least 3 results at 2 or more times',
      line,
    );
  }
  const tValue = tQuantile(r.levelPerSide, line.df);
  if (tValue === null) return emptyResult('invalid_input', 'the t quantile could not be computed', line);

  const halfUp = (opts.limitRounding ?? 'none') === 'to_limit_decimals';
  const sides: SideCrossing[] = [];
  if (r.lowerEff !== null) sides.push(crossing(line, tValue, 'lower', r.lowerEff, r.maxMonths, halfUp));
  if (r.upperEff !== null) sides.push(crossing(line, tValue, 'upper', r.upperEff, r.maxMonths, halfUp));
  const twoSidedNote = r.levelPerSide > (opts.confidence ?? 0.95) ? ` (two-sided ${+((opts.confidence ?? 0.95) * 100).toFixed(2)} %)` : '';
  const pct = `${+(r.levelPerSide * 100).toFixed(2)} %${twoSidedNote}`;
  // Results exactly on a line: the bound is the line itself, which no real data do; worth a look.
  const warning =
    line.residualSD <= 1e-12 * Math.max(1, Math.abs(line.intercept))
      ? 'The results lie exactly on a straight line (no residual spread), so the confidence bound is the line itself: check the data.'
      : undefined;
  const base = { levelPerSide: r.levelPerSide, tValue, line, horizonMonths: r.maxMonths, ...(warning ? { warning } : {}) };

  const atStart = sides.find((s) => s.atStart);
  if (atStart) {
    return {
      ...base,
      months: 0,
      status: 'fails_at_start',
      governingSide: atStart.side,
      message: `The one-sided ${pct} ${atStart.side} confidence bound of the mean is already outside the ${limitText(r, atStart.side, limit)} at time 0: the data support no shelf life.`,
    };
  }
  const crossed = sides.filter((s) => s.months !== null).sort((a, b) => (a.months as number) - (b.months as number));
  if (crossed.length === 0) {
    return {
      ...base,
      months: null,
      status: 'not_reached',
      governingSide: null,
      message: `The one-sided ${pct} confidence bound of the mean stays inside the limit: not reached within ${r.maxMonths} months.`,
    };
  }
  const first = crossed[0];
  const months = first.months as number;
  return {
    ...base,
    months,
    status: 'crossed',
    governingSide: first.side,
    message: `The one-sided ${pct} ${first.side} confidence bound of the mean meets the ${limitText(r, first.side, limit)} at ${fmt(months)} months.`,
  };
}

/** One ANCOVA F test. */
export interface FTest {
  f: number | null;
  df1: number;
  df2: number;
  p: number;
  /** p < alpha: the batches differ in this respect. */
  significant: boolean;
}

/**
 * Denominator of the intercept (batch) test.
 * - 'full_model' (default): the separate-slopes model's mean square error, as in a
 *   sequential (type I) ANCOVA table of time, batch, batch x time; this is what
 *   LeBlond, Griffith & Aubuchon 2011 report (F batch 0.436).
 * - 'common_slope_model': the common-slope model's mean square error (more df).
 */
export type InterceptTestError = 'full_model' | 'common_slope_model';

export interface PoolingOptions {
  interceptTestError?: InterceptTestError;
}

export interface PoolingDecision {
  model: 'pooled' | 'common_slope' | 'separate';
  batches: string[];
  alpha: number;
  /** Equality of slopes: separate-slopes model vs common-slope model. */
  slopes: FTest | null;
  /** Equality of intercepts: common-slope model vs one line. */
  intercepts: FTest | null;
  message: string;
}

interface BatchSums {
  batch: string;
  n: number;
  tMean: number;
  yMean: number;
  sxx: number;
  sxy: number;
  syy: number;
  /** Residual SS of the batch's own line (0 when sxx = 0). */
  sse: number;
  times: number;
}

function batchSums(points: readonly BatchPoint[]): BatchSums[] {
  const groups = new Map<string, BatchPoint[]>();
  for (const p of points) {
    const g = groups.get(p.batch);
    if (g) g.push(p);
    else groups.set(p.batch, [p]);
  }
  return [...groups.entries()].map(([batch, ps]) => {
    const n = ps.length;
    const tMean = ps.reduce((s, p) => s + p.t, 0) / n;
    const yMean = ps.reduce((s, p) => s + p.y, 0) / n;
    let sxx = 0;
    let sxy = 0;
    let syy = 0;
    for (const p of ps) {
      sxx += (p.t - tMean) ** 2;
      sxy += (p.t - tMean) * (p.y - yMean);
      syy += (p.y - yMean) ** 2;
    }
    let sse = syy;
    if (sxx > 0) {
      const b = sxy / sxx;
      sse = ps.reduce((s, p) => s + (p.y - yMean - b * (p.t - tMean)) ** 2, 0);
    }
    return { batch, n, tMean, yMean, sxx, sxy, syy, sse, times: new Set(ps.map((p) => p.t)).size };
  });
}

function fTest(extraSS: number, df1: number, errorSS: number, df2: number, alpha: number, scale: number): FTest {
  const tiny = 1e-12 * Math.max(scale, Number.MIN_VALUE);
  const num = Math.max(0, extraSS) / df1;
  const den = errorSS / df2;
  if (!(den > tiny)) {
    // A perfect fit in the larger model: any extra variation is decisive.
    const p = num > tiny ? 0 : 1;
    return { f: null, df1, df2, p, significant: p < alpha };
  }
  const f = num / den;
  const p = fSurvival(f, df1, df2) ?? 1;
  return { f, df1, df2, p, significant: p < alpha };
}

/**
 * ICH Q1E poolability: F test for equal slopes (separate-slopes vs common-slope
 * model), then, if slopes are not significantly different, for equal intercepts
 * (common-slope model vs one line), both at `alpha` (0.25 per ICH Q1E).
 * Pool when neither is significant; common slope when only intercepts differ;
 * otherwise each batch alone.
 */
export function poolingDecision(
  points: readonly BatchPoint[],
  alpha = 0.25,
  opts: PoolingOptions = {},
): PoolingDecision {
  const sums = batchSums(points);
  const batches = sums.map((s) => s.batch);
  const k = sums.length;
  const N = points.length;
  const result = (model: PoolingDecision['model'], message: string, slopes: FTest | null = null, intercepts: FTest | null = null): PoolingDecision => ({
    model,
    batches,
    alpha,
    slopes,
    intercepts,
    message,
  });
  if (!Number.isFinite(alpha) || alpha <= 0 || alpha >= 1) {
    return result('separate', `the significance level must lie between 0 and 1; got ${alpha}; batches are evaluated one by one`);
  }
  if (points.some((p) => !Number.isFinite(p.t) || !Number.isFinite(p.y))) {
    return result('separate', 'some results or times are not finite numbers; batches are evaluated one by one');
  }
  if (k === 0) return result('separate', 'no results');
  if (k === 1) return result('pooled', `one batch (${batches[0]}): no pooling test needed`);
  const short = sums.filter((s) => s.times < 2).map((s) => s.batch);
  const dfFull = N - 2 * k;
  if (short.length > 0 || dfFull < 1) {
    const why =
      short.length > 0
        ? `batch ${short.join(', ')} has results at fewer than 2 times`
        : `${N} results are too few for ${k} separate lines (need at least ${2 * k + 1})`;
    return result('separate', `The batches cannot be tested for poolability: ${why}; batches are evaluated one by one.`);
  }
  const sseFull = sums.reduce((s, b) => s + b.sse, 0);
  const sxxW = sums.reduce((s, b) => s + b.sxx, 0);
  const sxyW = sums.reduce((s, b) => s + b.sxy, 0);
  const syyW = sums.reduce((s, b) => s + b.syy, 0);
  const sseCommon = syyW - (sxyW * sxyW) / sxxW;
  const dfCommon = N - k - 1;
  const all = linearFit(points.map((p) => ({ x: p.t, y: p.y })));
  const scale = all ? all.syy : syyW;
  const sseOne = all ? all.sse : syyW;

  const slopes = fTest(sseCommon - sseFull, k - 1, sseFull, dfFull, alpha, scale);
  const fmtTest = (name: string, t: FTest): string =>
    `${name}: F = ${t.f === null ? 'undefined (perfect fit)' : t.f.toFixed(3)} on (${t.df1}, ${t.df2}) df, p = ${t.p.toFixed(3)}`;
  if (slopes.significant) {
    return result(
      'separate',
      `Slopes differ at the ${alpha} level (${fmtTest('batch x time', slopes)}): each batch is evaluated alone and the shortest governs.`,
      slopes,
    );
  }
  const useFull = (opts.interceptTestError ?? 'full_model') === 'full_model';
  const intercepts = useFull
    ? fTest(sseOne - sseCommon, k - 1, sseFull, dfFull, alpha, scale)
    : fTest(sseOne - sseCommon, k - 1, sseCommon, dfCommon, alpha, scale);
  if (intercepts.significant) {
    return result(
      'common_slope',
      `Slopes do not differ but intercepts do at the ${alpha} level (${fmtTest('batch x time', slopes)}; ${fmtTest('batch', intercepts)}): common slope, one intercept per batch.`,
      slopes,
      intercepts,
    );
  }
  return result(
    'pooled',
    `Neither slopes nor intercepts differ at the ${alpha} level (${fmtTest('batch x time', slopes)}; ${fmtTest('batch', intercepts)}): all batches pooled into one line.`,
    slopes,
    intercepts,
  );
}

/**
 * How batches that can be pooled neither by slope nor by intercept are fitted.
 * - 'one_model' (default): one model with a separate intercept and slope per batch; every batch's
 *   bound uses that model's mean square error, Σ SSE_i / (N - 2k), on N - 2k degrees of freedom (k
 *   batches), as the published statistical programs for ICH Q1E do.
 * - 'each_alone': each batch fitted alone, with its own residual SD on n_i - 2 df. Not always the
 *   more cautious of the two: a batch with a small spread gets a narrower bound alone.
 */
export type SeparateFit = 'one_model' | 'each_alone';

export interface MultiBatchOptions extends ShelfLifeOptions, PoolingOptions {
  /** Significance level of the pooling tests, default 0.25 (ICH Q1E). */
  alpha?: number;
  separateFit?: SeparateFit;
}

/** A line for charting: the mean line of one batch (or of all, batch null). */
export interface ChartLine extends MeanLine {
  batch: string | null;
  /** Last time with data on this line, months. */
  tMax: number;
}

export interface BatchShelfLife extends ShelfLifeResult {
  batch: string;
}

export interface MultiBatchResult {
  months: number | null;
  status: ShelfLifeStatus;
  message: string;
  /** The search horizon used, months. */
  horizonMonths: number | null;
  /** Something to check (e.g. results exactly on a line), from the governing figure. */
  warning?: string;
  /** Batches left out of the fit for too little data (their readings stay on the chart), with why. */
  excluded: { batch: string; reason: string }[];
  /** With separate lines: the other way of fitting them, shown beside (see SeparateFit). */
  alternative: { separateFit: SeparateFit; months: number | null; status: ShelfLifeStatus; governingBatch: string | null; message: string } | null;
  model: PoolingDecision['model'];
  pooling: PoolingDecision;
  /** The batch whose figure governs, or null when pooled or when nothing governs. */
  governingBatch: string | null;
  /** Per-batch figures (under the pooled model every batch shares the pooled figure). */
  batches: BatchShelfLife[];
  lines: ChartLine[];
  levelPerSide: number | null;
  tValue: number | null;
}

function governing(results: BatchShelfLife[]): BatchShelfLife | null {
  const start = results.find((r) => r.status === 'fails_at_start');
  if (start) return start;
  const crossed = results.filter((r) => r.status === 'crossed').sort((a, b) => (a.months as number) - (b.months as number));
  return crossed[0] ?? null;
}

/**
 * Shelf life of one attribute from several batches. A batch with results at fewer than 2 times is
 * left out of the fit, with a note (its readings stay on the chart; it joins as soon as it has a
 * second time). Then the ICH Q1E poolability decision on the rest, and
 * - pooled: one line through all results;
 * - common slope: one line per batch with the common slope, each bound using the common-slope
 *   model's residual SD with N - k - 1 df; the shortest governs;
 * - separate: one model with a separate intercept and slope per batch, every bound on that model's
 *   mean square error with N - 2k df (default; see SeparateFit), the shortest governs; the figure of
 *   each batch fitted alone is given beside it.
 */
export function shelfLifeMultiBatch(
  points: readonly BatchPoint[],
  limit: AcceptanceLimit,
  opts: MultiBatchOptions = {},
): MultiBatchResult {
  const allSums = batchSums(points);
  const excluded = allSums
    .filter((s) => s.times < 2)
    .map((s) => ({
      batch: s.batch,
      reason: `results at one time only (${points.find((p) => p.batch === s.batch)?.t ?? 0} months): left out of the fit until it has results at 2 or more times; its readings stay on the chart`,
    }));
  const used = points.filter((p) => !excluded.some((e) => e.batch === p.batch));
  const tMaxAll = points.length ? Math.max(...points.map((p) => p.t).filter(Number.isFinite)) : 0;
  const horizonOpts: MultiBatchOptions = { ...opts, maxMonths: opts.maxMonths ?? searchHorizon(tMaxAll) };
  const pooling = poolingDecision(used, opts.alpha ?? 0.25, opts);
  const sums = batchSums(used);
  const tMaxOf = (batch: string | null): number => {
    const ts = points.filter((p) => batch === null || p.batch === batch).map((p) => p.t);
    return ts.length ? Math.max(...ts) : 0;
  };
  const exclusionNote = excluded.length ? ` Left out: batch ${excluded.map((e) => `${e.batch} (${e.reason})`).join('; ')}.` : '';
  const out = (
    batchResults: BatchShelfLife[],
    lines: ChartLine[],
    gov: BatchShelfLife | null,
    governingBatch: string | null,
    fallback: ShelfLifeResult,
    alternative: MultiBatchResult['alternative'] = null,
  ): MultiBatchResult => {
    const g = gov ?? fallback;
    return {
      months: g.months,
      status: g.status,
      message: `${g.message}${exclusionNote}`,
      horizonMonths: g.horizonMonths ?? horizonOpts.maxMonths ?? null,
      ...(g.warning ? { warning: g.warning } : {}),
      excluded,
      alternative,
      model: pooling.model,
      pooling,
      governingBatch,
      batches: batchResults,
      lines,
      levelPerSide: g.levelPerSide,
      tValue: g.tValue,
    };
  };
  if (used.length === 0) {
    return out([], [], null, null, emptyResult('insufficient_data', points.length ? 'Every batch has results at one time only, so no line can be fitted yet.' : 'no results'));
  }

  if (pooling.model === 'pooled') {
    const r = shelfLifeSingle(used, limit, horizonOpts);
    const batchResults = sums.map((s) => ({ ...r, batch: s.batch }));
    const lines: ChartLine[] = r.line ? [{ ...pickLine(r.line), batch: null, tMax: tMaxOf(null) }] : [];
    return out(batchResults, lines, null, null, { ...r, message: `Pooled: ${r.message}` });
  }

  const alone = (): BatchShelfLife[] => sums.map((s) => ({ ...shelfLifeSingle(used.filter((p) => p.batch === s.batch), limit, horizonOpts), batch: s.batch }));
  let batchResults: BatchShelfLife[];
  let alternative: MultiBatchResult['alternative'] = null;
  const separateFit = opts.separateFit ?? 'one_model';
  if (pooling.model === 'common_slope') {
    const k = sums.length;
    const N = used.length;
    const sxxW = sums.reduce((s, b) => s + b.sxx, 0);
    const sxyW = sums.reduce((s, b) => s + b.sxy, 0);
    const syyW = sums.reduce((s, b) => s + b.syy, 0);
    const slope = sxyW / sxxW;
    const df = N - k - 1;
    const residualSD = Math.sqrt(Math.max(0, syyW - (sxyW * sxyW) / sxxW) / df);
    batchResults = sums.map((s) => {
      const line: MeanLine = { n: s.n, intercept: s.yMean - slope * s.tMean, slope, residualSD, df, xMean: s.tMean, sxx: sxxW };
      return { ...shelfLifeSingle(line, limit, horizonOpts), batch: s.batch };
    });
  } else {
    const oneModel = (): BatchShelfLife[] => {
      const k = sums.length;
      const N = used.length;
      const df = N - 2 * k;
      const residualSD = Math.sqrt(sums.reduce((t, b) => t + b.sse, 0) / df);
      return sums.map((s) => {
        const slope = s.sxy / s.sxx;
        const line: MeanLine = { n: s.n, intercept: s.yMean - slope * s.tMean, slope, residualSD, df, xMean: s.tMean, sxx: s.sxx };
        return { ...shelfLifeSingle(line, limit, horizonOpts), batch: s.batch };
      });
    };
    const canOneModel = used.length - 2 * sums.length >= 1;
    const summary = (rs: BatchShelfLife[]) => {
      const g = governing(rs);
      const lacking = rs.some((r) => r.status === 'insufficient_data' || r.status === 'invalid_input');
      return {
        months: lacking ? null : (g?.months ?? null),
        status: lacking ? ('insufficient_data' as const) : (g?.status ?? rs[0]?.status ?? 'insufficient_data'),
        governingBatch: lacking ? null : (g?.batch ?? null),
      };
    };
    if (separateFit === 'one_model' && canOneModel) {
      batchResults = oneModel();
      const each = alone();
      const sm = summary(each);
      alternative = {
        separateFit: 'each_alone',
        ...sm,
        message:
          sm.status === 'insufficient_data'
            ? 'Each batch fitted alone: not every batch has enough data for a line of its own.'
            : `Each batch fitted alone (own residual SD, n - 2 df): ${sm.months != null ? `${fmt(sm.months)} months, batch ${sm.governingBatch} governs` : 'not reached within the horizon'}.`,
      };
    } else {
      batchResults = alone();
      if (canOneModel) {
        const sm = summary(oneModel());
        alternative = {
          separateFit: 'one_model',
          ...sm,
          message: `One model with separate intercepts and slopes (common MSE, N - 2k df): ${sm.months != null ? `${fmt(sm.months)} months, batch ${sm.governingBatch} governs` : 'not reached within the horizon'}.`,
        };
      }
    }
  }
  const lines: ChartLine[] = batchResults
    .filter((r) => r.line !== null)
    .map((r) => ({ ...pickLine(r.line as MeanLine), batch: r.batch, tMax: tMaxOf(r.batch) }));
  const label =
    pooling.model === 'common_slope'
      ? 'Common slope'
      : separateFit === 'one_model' && alternative?.separateFit === 'each_alone'
        ? 'Separate intercepts and slopes in one model'
        : 'Batches alone';

  const invalid = batchResults.find((r) => r.status === 'invalid_input');
  if (invalid) return out(batchResults, lines, null, null, invalid, alternative);
  const lacking = batchResults.filter((r) => r.status === 'insufficient_data');
  if (lacking.length > 0 || batchResults.length === 0) {
    const msg =
      batchResults.length === 0
        ? 'no results'
        : `${label}: batch ${lacking.map((r) => `${r.batch} (${r.message})`).join('; ')}; a batch evaluated alone must have enough data`;
    return out(batchResults, lines, null, null, emptyResult('insufficient_data', msg), alternative);
  }
  const gov = governing(batchResults);
  if (gov) {
    return out(batchResults, lines, { ...gov, message: `${label}: batch ${gov.batch} governs. ${gov.message}` }, gov.batch, gov, alternative);
  }
  const first = batchResults[0];
  return out(
    batchResults,
    lines,
    null,
    null,
    { ...first, message: `${label}: for every batch, ${first.message.charAt(0).toLowerCase()}${first.message.slice(1)}` },
    alternative,
  );
}

function pickLine(l: MeanLine | LinearFit): MeanLine {
  return {
    n: l.n,
    intercept: l.intercept,
    slope: l.slope,
    residualSD: l.residualSD,
    df: l.df,
    xMean: l.xMean,
    sxx: l.sxx,
  };
}
