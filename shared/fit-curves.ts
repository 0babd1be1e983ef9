/**
 * Points of a fitted mean line and its one-sided confidence bound(s) for drawing, on screen and in
 * the PDF report: ŷ ± t·s·sqrt(1/n + (t - t̄)²/Sxx) (ICH Q1E Appendix B), from the engine's lines
 * (shared/compute/shelf-life.ts). Pure; no I/O.
 */
import { confidenceBoundOfMean, type MeanLine } from './compute/regression';

const isNum = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);

/** Points of a fitted mean line and its confidence bound(s), from 0 to `tEnd` months. */
export function fitCurves(
  line: MeanLine & { tMax: number },
  limit: { lower?: number | null; upper?: number | null },
  levelPerSide: number | null,
  tEnd: number,
  steps = 48,
) {
  const fit: [number, number][] = [];
  const lower: [number, number][] = [];
  const upper: [number, number][] = [];
  const end = isNum(tEnd) && tEnd > 0 ? tEnd : isNum(line.tMax) && line.tMax > 0 ? line.tMax : 1;
  for (let i = 0; i <= steps; i += 1) {
    const t = (end * i) / steps;
    const y = line.intercept + line.slope * t;
    if (isNum(y)) fit.push([t, y]);
    if (levelPerSide !== null && isNum(levelPerSide)) {
      if (limit.lower != null) {
        const b = confidenceBoundOfMean(line, t, levelPerSide, 'lower');
        if (isNum(b)) lower.push([t, b]);
      }
      if (limit.upper != null) {
        const b = confidenceBoundOfMean(line, t, levelPerSide, 'upper');
        if (isNum(b)) upper.push([t, b]);
      }
    }
  }
  return { fit, lower, upper };
}

/**
 * How far a fit is drawn: to the crossing (a little past), else half as far again as the data; never
 * past the engine's search horizon (60 months when not given).
 */
export function fitEnd(r: { status: string; months: number | null; horizonMonths?: number | null }, line: { tMax: number }): number {
  const tMax = isNum(line.tMax) && line.tMax > 0 ? line.tMax : 1;
  const horizon = isNum(r.horizonMonths) && r.horizonMonths > 0 ? r.horizonMonths : 60;
  const target = r.status === 'crossed' && isNum(r.months) ? Math.max(tMax, r.months * 1.08) : tMax * 1.5;
  return Math.min(horizon, Math.max(tMax, target));
}
