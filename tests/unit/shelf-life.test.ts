import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import jStat from 'jstat';
import { linearRegression } from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { confidenceBoundOfMean, linearFit } from '../../shared/compute/regression';
import {
  poolingDecision,
  shelfLifeMultiBatch,
  shelfLifeSingle,
  type BatchPoint,
} from '../../shared/compute/shelf-life';

const here = path.dirname(fileURLToPath(import.meta.url));
// Reference data live in the repo's sibling folder shared/ (also in CI).
const refDir = path.resolve(here, '../fixtures/reference');

function readLeBlond(): { comment: string; points: BatchPoint[] } {
  const lines = fs.readFileSync(path.join(refDir, 'leblond-2011-pooled-potency.csv'), 'utf8').split(/\r?\n/);
  const comment = lines.filter((l) => l.startsWith('#')).join('\n');
  const data = lines.filter((l) => l.trim() !== '' && !l.startsWith('#')).slice(1);
  const points = data.map((l) => {
    const [batch, month, potency] = l.split(',');
    return { batch, t: Number(month), y: Number(potency) };
  });
  return { comment, points };
}

/** Value after `label` in the CSV header comment. */
function headerNumber(comment: string, re: RegExp): number {
  const m = re.exec(comment);
  if (!m) throw new Error(`not in the CSV header: ${re}`);
  return Number(m[1]);
}

/** Every number anywhere in a value is finite (no NaN, no Infinity). */
function allFinite(v: unknown): boolean {
  if (typeof v === 'number') return Number.isFinite(v);
  if (Array.isArray(v)) return v.every(allFinite);
  if (v && typeof v === 'object') return Object.values(v).every(allFinite);
  return true;
}

/**
 * Independent crossing of a lower one-sided bound with a lower limit, by the
 * closed-form quadratic (squaring a + b·t - L = T·s·sqrt(1/n + (t - x̄)²/Sxx)),
 * with the line from simple-statistics and t from jstat directly.
 */
function closedFormLowerCrossing(xs: number[], ys: number[], level: number, limit: number, error?: { s2: number; df: number }): number {
  const { m: b, b: a } = linearRegression(xs.map((x, i) => [x, ys[i]]));
  const n = xs.length;
  const xbar = xs.reduce((s, x) => s + x, 0) / n;
  const sxx = xs.reduce((s, x) => s + (x - xbar) ** 2, 0);
  const sse = xs.reduce((s, x, i) => s + (ys[i] - a - b * x) ** 2, 0);
  const s2 = error?.s2 ?? sse / (n - 2);
  const T = jStat.studentt.inv(level, error?.df ?? n - 2);
  const c = (T * T * s2) / sxx;
  const d = a - limit;
  const A = b * b - c;
  const B = 2 * b * d + 2 * c * xbar;
  const C = d * d - (T * T * s2) / n - c * xbar * xbar;
  const disc = Math.sqrt(B * B - 4 * A * C);
  const roots = [(-B - disc) / (2 * A), (-B + disc) / (2 * A)].filter((t) => t >= 0 && d + b * t >= 0);
  return Math.min(...roots);
}

describe('LeBlond, Griffith & Aubuchon 2011, J Valid Technol 17(3): pooled potency example', () => {
  const { comment, points } = readLeBlond();
  const limit = { lower: 95.0, decimals: 1 };

  it('has the data the header describes (3 batches, 0 to 24 months)', () => {
    expect(points).toHaveLength(31);
    expect(new Set(points.map((p) => p.batch))).toEqual(new Set(['b2', 'b5', 'b7']));
    expect(Math.max(...points.map((p) => p.t))).toBe(24);
  });

  it('pools: batch and batch x time not significant at 0.25, F as published (0.436, 0.229)', () => {
    const d = poolingDecision(points);
    expect(d.model).toBe('pooled');
    // Published F values, from the CSV header (the paper's Table V).
    const fBatch = headerNumber(comment, /F batch ([\d.]+)/);
    const fBatchTime = headerNumber(comment, /F batch x time ([\d.]+)/);
    expect(Math.abs((d.slopes?.f as number) - fBatchTime)).toBeLessThan(0.0005);
    expect(Math.abs((d.intercepts?.f as number) - fBatch)).toBeLessThan(0.0005);
    expect(d.slopes?.df1).toBe(2);
    expect(d.slopes?.df2).toBe(25);
    expect(d.slopes?.p).toBeGreaterThan(0.25);
    expect(d.intercepts?.p).toBeGreaterThan(0.25);
    expect(d.message).toMatch(/pooled/);
  });

  it('with the common-slope error term the batch F differs a little but still pools', () => {
    const d = poolingDecision(points, 0.25, { interceptTestError: 'common_slope_model' });
    expect(d.model).toBe('pooled');
    expect(d.intercepts?.df2).toBe(27);
    // Computed here, by hand from the sums of squares: ((SSE_one - SSE_common)/2) / (SSE_common/27).
    expect(d.intercepts?.f).toBeCloseTo(0.4624, 4);
  });

  it('pooled fit as independently recomputed (CSV header): 100.56688 - 0.1929936 t, s 0.78911, df 29', () => {
    const fit = linearFit(points.map((p) => ({ x: p.t, y: p.y })))!;
    expect(fit.intercept).toBeCloseTo(headerNumber(comment, /intercept ([\d.]+)/), 5);
    expect(fit.slope).toBeCloseTo(headerNumber(comment, /slope (-[\d.]+)/), 7);
    expect(fit.residualSD).toBeCloseTo(headerNumber(comment, /residual SD ([\d.]+)/), 5);
    expect(fit.df).toBe(29);
    // Published pooled fit y = 100.567 - 0.192994 t (CSV header, from the paper).
    expect(fit.intercept).toBeCloseTo(100.567, 3);
    expect(fit.slope).toBeCloseTo(-0.192994, 6);
  });

  it("limitRounding 'none': the lower bound meets 95.0 at 25.9958 months (paper: 26 months)", () => {
    const r = shelfLifeMultiBatch(points, limit, { limitRounding: 'none' });
    expect(r.model).toBe('pooled');
    expect(r.status).toBe('crossed');
    const recomputed = headerNumber(comment, /crossing ([\d.]+) months/);
    expect(recomputed).toBe(25.9958);
    expect(Math.abs((r.months as number) - recomputed)).toBeLessThan(0.00005);
    // Published: shelf life 26 months (CSV header).
    expect(Math.round(r.months as number)).toBe(headerNumber(comment, /shelf life (\d+) months/));
    // Independent closed-form solution with simple-statistics and jstat.
    const cf = closedFormLowerCrossing(points.map((p) => p.t), points.map((p) => p.y), 0.95, 95);
    expect(Math.abs((r.months as number) - cf)).toBeLessThan(1e-6);
    // Consistency: the bound equals the limit there.
    const line = r.lines[0];
    expect(confidenceBoundOfMean(line, r.months as number, 0.95, 'lower')).toBeCloseTo(95, 7);
    expect(r.lines).toHaveLength(1);
    expect(r.lines[0].batch).toBeNull();
    expect(r.batches.map((b) => b.months)).toEqual([r.months, r.months, r.months]);
    expect(r.message).toMatch(/lower limit 95\.0/);
  });

  it("limitRounding 'to_limit_decimals': bound rounded to 1 decimal meets 95.0 later, at 26.2241 months", () => {
    const r = shelfLifeMultiBatch(points, limit, { limitRounding: 'to_limit_decimals' });
    expect(r.status).toBe('crossed');
    const m = r.months as number;
    expect(m).toBeGreaterThan(25.9958);
    // CSV header: "treating the limit as 94.95 ... gives 26.2241 months".
    expect(Math.abs(m - headerNumber(comment, /gives ([\d.]+) months/))).toBeLessThan(0.00005);
    // Consistency: the bound equals 94.95 there, so it rounds to 95.0 just before and to 94.9 just after.
    const line = r.lines[0];
    expect(confidenceBoundOfMean(line, m, 0.95, 'lower')).toBeCloseTo(94.95, 7);
    expect(Number((confidenceBoundOfMean(line, m - 0.001, 0.95, 'lower') as number).toFixed(1))).toBe(95);
    expect(Number((confidenceBoundOfMean(line, m + 0.001, 0.95, 'lower') as number).toFixed(1))).toBe(94.9);
    expect(Math.abs(m - closedFormLowerCrossing(points.map((p) => p.t), points.map((p) => p.y), 0.95, 94.95))).toBeLessThan(1e-6);
  });

  it('a rising attribute mirrors a falling one (upper bound against an upper limit)', () => {
    // Reflect y -> 200 - y: the upper bound meets 105 where the lower bound met 95 (symmetry).
    const mirrored = points.map((p) => ({ ...p, y: 200 - p.y }));
    const r = shelfLifeMultiBatch(mirrored, { upper: 105 });
    expect(r.batches[0].governingSide).toBe('upper');
    expect(Math.abs((r.months as number) - 25.9958)).toBeLessThan(0.00005);
  });

  it('a two-sided limit uses 97.5 % on each side (ICH Q1E)', () => {
    const r = shelfLifeMultiBatch(points, { lower: 95, upper: 105 });
    expect(r.levelPerSide).toBe(0.975);
    expect(r.months as number).toBeLessThan(25.9958);
    const cf = closedFormLowerCrossing(points.map((p) => p.t), points.map((p) => p.y), 0.975, 95);
    expect(Math.abs((r.months as number) - cf)).toBeLessThan(1e-6);
    expect(r.message).toMatch(/two-sided 95 %/);
    const one = shelfLifeMultiBatch(points, { lower: 95, upper: 105 }, { sided: 'one_sided' });
    expect(Math.abs((one.months as number) - 25.9958)).toBeLessThan(0.00005);
  });

  it('each batch alone, when asked, when the pooling tests reject (alpha forced to 0.9): the shortest governs', () => {
    const r = shelfLifeMultiBatch(points, { lower: 95 }, { alpha: 0.9, separateFit: 'each_alone' });
    expect(r.model).toBe('separate');
    expect(r.lines).toHaveLength(3);
    const byBatch = ['b2', 'b5', 'b7'].map((b) => {
      const ps = points.filter((p) => p.batch === b);
      return closedFormLowerCrossing(ps.map((p) => p.t), ps.map((p) => p.y), 0.95, 95);
    });
    r.batches.forEach((b, i) => expect(Math.abs((b.months as number) - byBatch[i])).toBeLessThan(1e-6));
    expect(r.months).toBeCloseTo(Math.min(...byBatch), 6);
    expect(r.governingBatch).toBe(['b2', 'b5', 'b7'][byBatch.indexOf(Math.min(...byBatch))]);
    expect(r.message).toMatch(/governs/);
  });

  it('never returns NaN or Infinity', () => {
    expect(allFinite(shelfLifeMultiBatch(points, limit))).toBe(true);
    expect(allFinite(shelfLifeMultiBatch(points, { lower: 95 }, { alpha: 0.9 }))).toBe(true);
  });
});

describe('common slope model (constructed data)', () => {
  // Two batches, same slope -0.2 %/month, intercepts 101 and 99; small alternating noise.
  const noise = [0.1, -0.1, 0.05, -0.05, 0.08, -0.08];
  const times = [0, 3, 6, 9, 12, 18];
  const points: BatchPoint[] = [
    ...times.map((t, i) => ({ batch: 'A', t, y: 101 - 0.2 * t + noise[i] })),
    ...times.map((t, i) => ({ batch: 'B', t, y: 99 - 0.2 * t - noise[(i + 1) % 6] })),
  ];

  it('chooses common slope, and per-batch bounds use the common-slope residual SD with N - k - 1 df', () => {
    const r = shelfLifeMultiBatch(points, { lower: 95 });
    expect(r.model).toBe('common_slope');
    expect(r.pooling.slopes?.significant).toBe(false);
    expect(r.pooling.intercepts?.significant).toBe(true);
    expect(r.lines).toHaveLength(2);
    // Frisch-Waugh identity (textbook least squares): the common slope is the slope
    // through the origin of batch-centred y on batch-centred t; computed here by hand.
    const centred = ['A', 'B'].flatMap((b) => {
      const ps = points.filter((p) => p.batch === b);
      const tm = ps.reduce((s, p) => s + p.t, 0) / ps.length;
      const ym = ps.reduce((s, p) => s + p.y, 0) / ps.length;
      return ps.map((p) => [p.t - tm, p.y - ym]);
    });
    const slope = centred.reduce((s, [x, y]) => s + x * y, 0) / centred.reduce((s, [x]) => s + x * x, 0);
    const sse = ['A', 'B'].reduce((acc, b) => {
      const ps = points.filter((p) => p.batch === b);
      const tm = ps.reduce((s, p) => s + p.t, 0) / ps.length;
      const ym = ps.reduce((s, p) => s + p.y, 0) / ps.length;
      return acc + ps.reduce((s, p) => s + (p.y - ym - slope * (p.t - tm)) ** 2, 0);
    }, 0);
    const line = r.lines.find((l) => l.batch === 'B')!;
    expect(line.slope).toBeCloseTo(slope, 12);
    expect(line.df).toBe(12 - 2 - 1);
    expect(line.residualSD).toBeCloseTo(Math.sqrt(sse / 9), 12);
    // Batch B starts lower, so it governs; its bound meets 95 at the reported time.
    expect(r.governingBatch).toBe('B');
    expect(confidenceBoundOfMean(line, r.months as number, 0.95, 'lower')).toBeCloseTo(95, 7);
    const a = r.batches.find((b) => b.batch === 'A')!;
    expect(a.months as number).toBeGreaterThan(r.months as number);
  });
});

describe('messages instead of guesses', () => {
  it('asks for more data: 2 results at 2 times fix a line but not its spread', () => {
    const r = shelfLifeSingle([{ t: 0, y: 100 }, { t: 3, y: 99 }], { lower: 95 });
    expect(r.status).toBe('insufficient_data');
    expect(r.months).toBeNull();
    expect(r.message).toBe('2 results at 2 times fix a line exactly and leave nothing to estimate its spread; needs at least 3 results');
  });

  it('two results at the same time need a second time, not "1 more"', () => {
    const r = shelfLifeSingle([{ t: 0, y: 100 }, { t: 0, y: 99.8 }], { lower: 95 });
    expect(r.status).toBe('insufficient_data');
    expect(r.message).toBe('all 2 results are at one time (0 months); needs results at 2 or more times');
    expect(r.message).not.toMatch(/1 more/);
  });

  it('all points at one time', () => {
    const r = shelfLifeSingle([{ t: 0, y: 100 }, { t: 0, y: 99 }, { t: 0, y: 101 }], { lower: 95 });
    expect(r.status).toBe('insufficient_data');
    expect(r.message).toMatch(/all 3 results are at one time \(0 months\)/);
  });

  it('not reached within the horizon rather than Infinity', () => {
    const r = shelfLifeSingle([{ t: 0, y: 100 }, { t: 3, y: 100.1 }, { t: 6, y: 99.9 }, { t: 9, y: 100 }], { lower: 95 }, { maxMonths: 36 });
    expect(r.status).toBe('not_reached');
    expect(r.months).toBeNull();
    expect(r.message).toMatch(/not reached within 36 months/);
    expect(allFinite(r)).toBe(true);
  });

  it('fails at start when the bound is outside the limit at time 0', () => {
    const r = shelfLifeSingle([{ t: 0, y: 94 }, { t: 3, y: 93.5 }, { t: 6, y: 93 }], { lower: 95 });
    expect(r.status).toBe('fails_at_start');
    expect(r.months).toBe(0);
  });

  it('a perfect straight line crosses exactly where the line does (arithmetic)', () => {
    // y = 100 - 0.5 t meets 95 at t = 10; zero residual SD makes the bound the line itself.
    const r = shelfLifeSingle([{ t: 0, y: 100 }, { t: 2, y: 99 }, { t: 4, y: 98 }], { lower: 95 });
    expect(r.status).toBe('crossed');
    expect(r.months).toBeCloseTo(10, 8);
  });

  it('rejects impossible limits and options', () => {
    const pts = [{ t: 0, y: 100 }, { t: 2, y: 99 }, { t: 4, y: 98 }];
    expect(shelfLifeSingle(pts, {}).status).toBe('invalid_input');
    expect(shelfLifeSingle(pts, { lower: 10, upper: 5 }).status).toBe('invalid_input');
    expect(shelfLifeSingle(pts, { lower: 95 }, { confidence: 1 }).status).toBe('invalid_input');
    expect(shelfLifeSingle(pts, { lower: 95 }, { maxMonths: Number.POSITIVE_INFINITY }).status).toBe('invalid_input');
  });

  it('multi-batch: a batch with results at one time is left out of the fit with a note, and the rest gives the figure', () => {
    const pts: BatchPoint[] = [
      { batch: 'A', t: 0, y: 100 }, { batch: 'A', t: 3, y: 99 }, { batch: 'A', t: 6, y: 98.2 },
      { batch: 'B', t: 0, y: 100 },
    ];
    const r = shelfLifeMultiBatch(pts, { lower: 95 });
    expect(r.excluded).toEqual([{ batch: 'B', reason: expect.stringMatching(/one time only \(0 months\): left out of the fit until it has results at 2 or more times; its readings stay on the chart/) }]);
    expect(r.status).toBe('crossed');
    // The figure is batch A's alone, as if B were not there (closed form, simple-statistics line, jstat t).
    const alone = closedFormLowerCrossing([0, 3, 6], [100, 99, 98.2], 0.95, 95);
    expect(r.months).toBeCloseTo(alone, 6);
    expect(r.message).toMatch(/Left out: batch B/);
    expect(allFinite(r)).toBe(true);
    // As soon as B has a second time it is brought in.
    const later = shelfLifeMultiBatch([...pts, { batch: 'B', t: 3, y: 99.1 }, { batch: 'B', t: 6, y: 98.3 }], { lower: 95 });
    expect(later.excluded).toEqual([]);
    expect(later.pooling.batches).toEqual(['A', 'B']);
  });

  it('one batch needs no pooling test', () => {
    const d = poolingDecision([{ batch: 'A', t: 0, y: 1 }, { batch: 'A', t: 1, y: 2 }, { batch: 'A', t: 2, y: 2.5 }]);
    expect(d.model).toBe('pooled');
    expect(d.slopes).toBeNull();
  });
});

describe('batches that can be pooled neither by slope nor by intercept: one model, separate lines', () => {
  // Constructed data: three batches with clearly different slopes (-0.10, -0.25, -0.40 %/month) and small noise.
  const noise = [0.15, -0.2, 0.05, 0.1, -0.12, 0.02, -0.05];
  const times = [0, 3, 6, 9, 12, 18, 24];
  const slopes: Record<string, number> = { L1: -0.1, L2: -0.25, L3: -0.4 };
  const pts: BatchPoint[] = Object.entries(slopes).flatMap(([batch, b], k) =>
    times.map((t, i) => ({ batch, t, y: 100.5 + b * t + noise[(i + 2 * k) % noise.length] * (k + 1) })),
  );
  const limit = { lower: 95 };

  it('by default every batch bound uses the one model\'s mean square error, Σ SSE_i / (N - 2k), on N - 2k df', () => {
    const r = shelfLifeMultiBatch(pts, limit);
    expect(r.model).toBe('separate');
    // By hand: each batch's own least-squares line (simple-statistics), its SSE, the pooled MSE, t from jstat.
    const N = pts.length;
    const k = 3;
    let sse = 0;
    for (const b of Object.keys(slopes)) {
      const ps = pts.filter((p) => p.batch === b);
      const { m, b: a } = linearRegression(ps.map((p) => [p.t, p.y]));
      sse += ps.reduce((s, p) => s + (p.y - a - m * p.t) ** 2, 0);
    }
    const error = { s2: sse / (N - 2 * k), df: N - 2 * k };
    const byBatch = Object.keys(slopes).map((b) => {
      const ps = pts.filter((p) => p.batch === b);
      return closedFormLowerCrossing(ps.map((p) => p.t), ps.map((p) => p.y), 0.95, 95, error);
    });
    r.batches.forEach((b, i) => expect(b.months as number).toBeCloseTo(byBatch[i], 6));
    expect(r.months).toBeCloseTo(Math.min(...byBatch), 6);
    expect(r.batches[0].line!.df).toBe(N - 2 * k);
    expect(r.message).toMatch(/^Separate intercepts and slopes in one model: batch L3 governs/);
  });

  it('shows the fit-alone figure beside it, which is not always the more cautious', () => {
    const r = shelfLifeMultiBatch(pts, limit);
    const alone = Object.keys(slopes).map((b) => {
      const ps = pts.filter((p) => p.batch === b);
      return closedFormLowerCrossing(ps.map((p) => p.t), ps.map((p) => p.y), 0.95, 95);
    });
    expect(r.alternative).toMatchObject({ separateFit: 'each_alone', status: 'crossed' });
    expect(r.alternative!.months).toBeCloseTo(Math.min(...alone), 6);
    expect(r.alternative!.message).toMatch(/Each batch fitted alone/);
    // Batch L1 has the smallest noise: alone, its own small residual SD gives it a narrower bound (a later crossing) than the common MSE.
    const one = r.batches.find((b) => b.batch === 'L1')!.months as number;
    expect(alone[0]).toBeGreaterThan(one);
    // ... while the noisiest batch, L3, is the other way round.
    expect(alone[2]).toBeLessThan(r.batches.find((b) => b.batch === 'L3')!.months as number);
  });
});

describe('studies longer than 60 months', () => {
  // Constructed: 72 months of data on a line from 100 falling 0.07 %/month, small noise; the bound meets 95 near 69 months.
  const times = [0, 3, 6, 9, 12, 18, 24, 36, 48, 60, 72];
  const noise = [0.05, -0.04, 0.03, -0.05, 0.02, 0.04, -0.03, 0.01, -0.02, 0.03, -0.01];
  const pts = times.map((t, i) => ({ t, y: 100 - 0.07 * t + noise[i] }));

  it('searches as far as the data allow (2 × 72 months), finds the crossing and says so', () => {
    const r = shelfLifeSingle(pts, { lower: 95 });
    const expected = closedFormLowerCrossing(times, pts.map((p) => p.y), 0.95, 95);
    expect(expected).toBeGreaterThan(60);
    expect(r.status).toBe('crossed');
    expect(r.months).toBeCloseTo(expected, 6);
    expect(r.horizonMonths).toBe(144);
    expect(r.message).not.toMatch(/not reached/);
  });

  it('says "not reached within N months" only when that is true, with the N searched', () => {
    const flat = times.map((t, i) => ({ t, y: 100 + noise[i] }));
    const r = shelfLifeSingle(flat, { lower: 95 });
    expect(r.status).toBe('not_reached');
    expect(r.message).toMatch(/not reached within 144 months/);
    // Short data keep the usual 60-month horizon.
    expect(shelfLifeSingle(flat.slice(0, 5), { lower: 95 }).message).toMatch(/not reached within 60 months/);
  });
});

describe('limits shown are the limits used; one rule for a result on a limit', () => {
  it('a limit computed from a mean (5.485 - 0.5 = 4.985) is shown as 4.985, not 4.99', () => {
    const r = shelfLifeSingle([{ t: 0, y: 5.5 }, { t: 3, y: 5.3 }, { t: 6, y: 5.12 }, { t: 9, y: 4.95 }], { lower: 4.985, decimals: 2 });
    expect(r.message).toMatch(/lower limit 4\.985 /);
    expect(r.message).not.toMatch(/4\.99/);
  });

  it('a bound exactly on the limit is inside, as in the recording criteria (limits are inclusive)', () => {
    // A line with no spread through (0, 95): the bound at t = 0 is 95 exactly, on the lower limit.
    const r = shelfLifeSingle([{ t: 0, y: 95 }, { t: 3, y: 95 }, { t: 6, y: 95 }], { lower: 95 });
    expect(r.status).not.toBe('fails_at_start');
    expect(r.status).toBe('not_reached');
  });

  it('a perfect line (no residual spread) gives its crossing with a warning to check the data', () => {
    const r = shelfLifeSingle([{ t: 0, y: 100 }, { t: 6, y: 99 }, { t: 12, y: 98 }], { lower: 95 });
    expect(r.status).toBe('crossed');
    expect(r.months).toBeCloseTo(30, 6); // 100 - t/6 = 95 at t = 30, by hand
    expect(r.warning).toMatch(/exactly on a straight line.*check the data/);
    const m = shelfLifeMultiBatch([{ batch: 'A', t: 0, y: 100 }, { batch: 'A', t: 6, y: 99 }, { batch: 'A', t: 12, y: 98 }], { lower: 95 });
    expect(m.warning).toMatch(/check the data/);
  });
});
