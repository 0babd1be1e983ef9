/**
 * Straight-line least squares and the distribution quantiles the shelf-life
 * computations need. Pure functions: no I/O, no clock.
 *
 * Sums are formed in two passes around the means (centered), which keeps
 * ill-conditioned data such as NIST StRD "Norris" accurate to well beyond
 * 9 significant digits in double precision.
 */
import jStat from 'jstat';

/** One (x, y) observation. */
export interface Point {
  x: number;
  y: number;
}

/**
 * A fitted mean line with what is needed to put a confidence bound on it:
 * ŷ(x) = intercept + slope·x, Var(ŷ(x)) = residualSD²·(1/n + (x - xMean)²/sxx),
 * with `df` degrees of freedom for the residual SD.
 *
 * A plain fit fills it directly; the common-slope (ANCOVA) model fills one per
 * batch, with n = that batch's count, xMean = that batch's mean time, sxx = the
 * pooled within-batch Sxx and df = N - k - 1.
 */
export interface MeanLine {
  n: number;
  intercept: number;
  slope: number;
  residualSD: number;
  df: number;
  xMean: number;
  sxx: number;
}

/** Ordinary least-squares fit of y = intercept + slope·x. */
export interface LinearFit extends MeanLine {
  sdIntercept: number;
  sdSlope: number;
  /** Coefficient of determination; null when every y is equal (no variation to explain). */
  rSquared: number | null;
  yMean: number;
  /** Residual sum of squares. */
  sse: number;
  /** Centered sum of squares of y. */
  syy: number;
  /** Centered cross-product sum. */
  sxy: number;
}

/**
 * Why a set of points cannot be fitted, or null when it can.
 * A fit needs at least 3 finite points at 2 or more distinct x values
 * (so that the residual SD has at least 1 degree of freedom).
 */
export function fitProblem(points: readonly Point[]): string | null {
  if (points.some((p) => !Number.isFinite(p.x) || !Number.isFinite(p.y))) {
    return 'some values are missing or not finite numbers';
  }
  const n = points.length;
  const distinct = new Set(points.map((p) => p.x)).size;
  if (n < 3) {
    return `needs at least 3 time points at 2 or more times; have ${n}, need ${3 - n} more`;
  }
  if (distinct < 2) {
    return `all ${n} points are at one time (${points[0].x}); needs results at 2 or more times`;
  }
  return null;
}

/**
 * Least-squares straight line through the points, or null when `fitProblem`
 * reports a problem (fewer than 3 points, one distinct x, non-finite values).
 */
export function linearFit(points: readonly Point[]): LinearFit | null {
  if (fitProblem(points) !== null) return null;
  const n = points.length;
  let sx = 0;
  let sy = 0;
  for (const p of points) {
    sx += p.x;
    sy += p.y;
  }
  const xMean = sx / n;
  const yMean = sy / n;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (const p of points) {
    const dx = p.x - xMean;
    const dy = p.y - yMean;
    sxx += dx * dx;
    sxy += dx * dy;
    syy += dy * dy;
  }
  if (!(sxx > 0)) return null;
  const slope = sxy / sxx;
  const intercept = yMean - slope * xMean;
  // Residuals computed directly (not as syy - slope·sxy) to avoid cancellation.
  let sse = 0;
  for (const p of points) {
    const r = p.y - yMean - slope * (p.x - xMean);
    sse += r * r;
  }
  const df = n - 2;
  const residualSD = Math.sqrt(sse / df);
  const sdSlope = residualSD / Math.sqrt(sxx);
  const sdIntercept = residualSD * Math.sqrt(1 / n + (xMean * xMean) / sxx);
  const rSquared = syy > 0 ? 1 - sse / syy : null;
  return {
    n,
    intercept,
    slope,
    sdIntercept,
    sdSlope,
    residualSD,
    rSquared,
    xMean,
    yMean,
    sxx,
    sxy,
    syy,
    sse,
    df,
  };
}

/** Fitted mean at x. */
export function predict(line: Pick<MeanLine, 'intercept' | 'slope'>, x: number): number {
  return line.intercept + line.slope * x;
}

function validProbability(p: number): boolean {
  return Number.isFinite(p) && p > 0 && p < 1;
}

function validDf(df: number): boolean {
  return Number.isFinite(df) && df > 0;
}

/**
 * Student t quantile: the value t with P(T ≤ t) = p for df degrees of freedom.
 * jstat's inverse is accurate to about 1e-8; one Newton step on jstat's own cdf
 * and pdf brings it to about 1e-11. Null for p outside (0, 1) or df ≤ 0.
 */
export function tQuantile(p: number, df: number): number | null {
  if (!validProbability(p) || !validDf(df)) return null;
  let t = jStat.studentt.inv(p, df);
  for (let i = 0; i < 2; i += 1) {
    const dens = jStat.studentt.pdf(t, df);
    if (!(dens > 0)) break;
    const next = t - (jStat.studentt.cdf(t, df) - p) / dens;
    if (!Number.isFinite(next)) break;
    t = next;
  }
  return Number.isFinite(t) ? t : null;
}

/**
 * Upper-tail probability P(F > x) of the F distribution with (d1, d2) degrees
 * of freedom, via the regularized incomplete beta function (accurate for small
 * p-values, unlike 1 - cdf). Null for invalid arguments.
 */
export function fSurvival(x: number, d1: number, d2: number): number | null {
  if (!Number.isFinite(x) || !validDf(d1) || !validDf(d2)) return null;
  if (x <= 0) return 1;
  const p = jStat.ibeta(d2 / (d2 + d1 * x), d2 / 2, d1 / 2);
  return Number.isFinite(p) ? Math.min(1, Math.max(0, p)) : null;
}

/**
 * F quantile: the value f with P(F ≤ f) = p. jstat's inverse, polished by
 * Newton steps on the cdf. Null for invalid arguments.
 */
export function fQuantile(p: number, d1: number, d2: number): number | null {
  if (!validProbability(p) || !validDf(d1) || !validDf(d2)) return null;
  let f = jStat.centralF.inv(p, d1, d2);
  for (let i = 0; i < 2; i += 1) {
    const dens = jStat.centralF.pdf(f, d1, d2);
    const surv = fSurvival(f, d1, d2);
    if (!(dens > 0) || surv === null) break;
    const next = f - (1 - surv - p) / dens;
    if (!Number.isFinite(next) || next <= 0) break;
    f = next;
  }
  return Number.isFinite(f) ? f : null;
}

/**
 * One-sided confidence bound of the mean line at x:
 * ŷ(x) ∓ t(level, df)·s·sqrt(1/n + (x - x̄)²/Sxx), lower or upper.
 * `level` is the one-sided confidence (0.95 for ICH Q1E's one-sided 95 %;
 * 0.975 for each side of a two-sided 95 % interval). Null for invalid input.
 */
export function confidenceBoundOfMean(
  line: MeanLine,
  x: number,
  level: number,
  side: 'lower' | 'upper',
): number | null {
  const t = tQuantile(level, line.df);
  if (t === null || !Number.isFinite(x) || !(line.sxx > 0) || !(line.n > 0)) return null;
  return boundWithT(line, x, t, side);
}

/** The same bound with the t multiplier already known (used in root finding). */
export function boundWithT(line: MeanLine, x: number, t: number, side: 'lower' | 'upper'): number {
  const dx = x - line.xMean;
  const half = t * line.residualSD * Math.sqrt(1 / line.n + (dx * dx) / line.sxx);
  const yHat = line.intercept + line.slope * x;
  return side === 'lower' ? yHat - half : yHat + half;
}
