import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import {
  confidenceBoundOfMean,
  fitProblem,
  fQuantile,
  fSurvival,
  linearFit,
  predict,
  tQuantile,
} from '../../shared/compute/regression';

const here = path.dirname(fileURLToPath(import.meta.url));
// The repo's sibling folder shared/ holds the read-only reference data (also in CI).
const refDir = path.resolve(here, '../fixtures/reference');

/** Parse a reference CSV: '#' lines are the header comment, then a header row. */
function readCsv(name: string): { comment: string; rows: Record<string, string>[] } {
  const lines = fs.readFileSync(path.join(refDir, name), 'utf8').split(/\r?\n/);
  const comment = lines.filter((l) => l.startsWith('#')).join('\n');
  const data = lines.filter((l) => l.trim() !== '' && !l.startsWith('#'));
  const head = data[0].split(',');
  const rows = data.slice(1).map((l) => Object.fromEntries(l.split(',').map((v, i) => [head[i], v])));
  return { comment, rows };
}

/** Relative agreement to at least `digits` significant digits. */
function expectSignificant(actual: number, certified: number, digits: number): void {
  expect(Math.abs(actual - certified) / Math.abs(certified)).toBeLessThan(0.5 * 10 ** -digits);
}

describe('linearFit: NIST StRD Norris', () => {
  const { comment, rows } = readCsv('nist-strd-norris.csv');
  const fit = linearFit(rows.map((r) => ({ x: Number(r.x), y: Number(r.y) })));

  // Certified values read from the header comment of nist-strd-norris.csv
  // (NIST/ITL Statistical Reference Datasets, linear least squares, "Norris").
  const certified = (re: RegExp): number => {
    const m = re.exec(comment);
    if (!m) throw new Error(`certified value not found: ${re}`);
    return Number(m[1]);
  };
  const B0 = certified(/B0 = (\S+)/);
  const sdB0 = certified(/B0 = \S+\s+\(sd (\S+)\)/);
  const B1 = certified(/B1 = +(\S+)/);
  const sdB1 = certified(/B1 = +\S+\s+\(sd (\S+)\)/);
  const resSD = certified(/residual standard deviation = (\S+)/);
  const r2 = certified(/R-squared = (\S+)/);
  const rss = certified(/residual sum of squares = (\S+)/);

  it('reads the certified values from the CSV header', () => {
    expect(B0).toBeCloseTo(-0.262323073774029, 15);
    expect(sdB1).toBeCloseTo(0.429796848199937e-3, 15);
    expect(rows).toHaveLength(36);
  });

  it('matches every certified value to at least 9 significant digits (NIST StRD Norris)', () => {
    expect(fit).not.toBeNull();
    if (!fit) return;
    expectSignificant(fit.intercept, B0, 9);
    expectSignificant(fit.sdIntercept, sdB0, 9);
    expectSignificant(fit.slope, B1, 9);
    expectSignificant(fit.sdSlope, sdB1, 9);
    expectSignificant(fit.residualSD, resSD, 9);
    expect(fit.rSquared).not.toBeNull();
    expectSignificant(fit.rSquared as number, r2, 9);
    expectSignificant(fit.sse, rss, 9);
    expect(fit.df).toBe(34);
    expect(fit.n).toBe(36);
  });
});

describe('fitProblem and degenerate input', () => {
  it('asks for 3 points at 2 or more times', () => {
    expect(fitProblem([{ x: 0, y: 1 }])).toBe('needs at least 3 time points at 2 or more times; have 1, need 2 more');
    expect(linearFit([{ x: 0, y: 1 }, { x: 1, y: 2 }])).toBeNull();
    expect(fitProblem([{ x: 2, y: 1 }, { x: 2, y: 2 }, { x: 2, y: 3 }])).toMatch(/all 3 points are at one time/);
    expect(linearFit([{ x: 2, y: 1 }, { x: 2, y: 2 }, { x: 2, y: 3 }])).toBeNull();
    expect(fitProblem([{ x: 0, y: 1 }, { x: 1, y: Number.NaN }, { x: 2, y: 3 }])).toMatch(/not finite/);
  });

  it('gives R² null (not NaN) when every y is equal, and an exact line otherwise', () => {
    const flat = linearFit([{ x: 0, y: 5 }, { x: 1, y: 5 }, { x: 2, y: 5 }]);
    expect(flat?.rSquared).toBeNull();
    expect(flat?.residualSD).toBe(0);
    // y = 1 + 2x exactly (arithmetic).
    const exact = linearFit([{ x: 0, y: 1 }, { x: 1, y: 3 }, { x: 2, y: 5 }, { x: 3, y: 7 }]);
    expect(exact?.slope).toBeCloseTo(2, 14);
    expect(exact?.intercept).toBeCloseTo(1, 14);
    expect(exact?.rSquared).toBe(1);
    expect(predict(exact!, 10)).toBeCloseTo(21, 12);
  });
});

describe('tQuantile against the NIST/SEMATECH e-Handbook, 1.3.6.7.2 (critical values of Student t, 3 decimals as tabulated)', () => {
  const table: [number, number, number][] = [
    [0.95, 10, 1.812],
    [0.975, 10, 2.228],
    [0.95, 1, 6.314],
    [0.95, 30, 1.697],
    [0.975, 20, 2.086],
    // The next two rows: from memory of the same table.
    [0.99, 5, 3.365],
    [0.975, 29, 2.045],
  ];
  it.each(table)('t(%s, %s) = %s', (p, df, expected) => {
    const t = tQuantile(p, df);
    expect(t).not.toBeNull();
    expect(Math.abs((t as number) - expected)).toBeLessThanOrEqual(0.0005);
  });

  it('returns null for impossible arguments', () => {
    expect(tQuantile(0, 10)).toBeNull();
    expect(tQuantile(1, 10)).toBeNull();
    expect(tQuantile(0.95, 0)).toBeNull();
    expect(tQuantile(Number.NaN, 5)).toBeNull();
  });
});

describe('fQuantile / fSurvival against the NIST/SEMATECH e-Handbook, 1.3.6.7.3 (upper 5 % points of F)', () => {
  const table: [number, number, number][] = [
    [1, 10, 4.965],
    [2, 10, 4.103],
    // The next two rows: from memory of the same table.
    [2, 25, 3.385],
    [5, 10, 3.326],
  ];
  it.each(table)('F(0.95; %s, %s) = %s', (d1, d2, expected) => {
    const f = fQuantile(0.95, d1, d2);
    expect(Math.abs((f as number) - expected)).toBeLessThanOrEqual(0.0005);
    // The survival function is the quantile's inverse.
    expect(fSurvival(f as number, d1, d2)).toBeCloseTo(0.05, 8);
  });

  it('agrees with t² = F(1, df) (identity of the distributions)', () => {
    const t = tQuantile(0.975, 10) as number;
    expect(fQuantile(0.95, 1, 10)).toBeCloseTo(t * t, 7);
  });

  it('returns null for impossible arguments, 1 at x ≤ 0', () => {
    expect(fQuantile(1.2, 1, 10)).toBeNull();
    expect(fSurvival(Number.POSITIVE_INFINITY, 1, 10)).toBeNull();
    expect(fSurvival(0, 2, 10)).toBe(1);
  });
});

describe('confidenceBoundOfMean', () => {
  it('is ŷ ± t·s·sqrt(1/n + (x - x̄)²/Sxx) (formula in ICH Q1E Appendix B), by hand', () => {
    // Points (0,10), (1,9), (2,8.5), (3,7.5): slope -0.8, intercept 9.95,
    // residuals 0.05, -0.15, 0.15, -0.05 -> SSE 0.05, s = sqrt(0.025); x̄ 1.5, Sxx 5.
    const fit = linearFit([{ x: 0, y: 10 }, { x: 1, y: 9 }, { x: 2, y: 8.5 }, { x: 3, y: 7.5 }])!;
    expect(fit.slope).toBeCloseTo(-0.8, 12);
    expect(fit.intercept).toBeCloseTo(9.95, 12);
    expect(fit.residualSD).toBeCloseTo(Math.sqrt(0.025), 12);
    const t = tQuantile(0.95, 2) as number; // 2.920 in the e-Handbook t table (from memory)
    expect(t).toBeCloseTo(2.92, 2);
    const half = t * Math.sqrt(0.025) * Math.sqrt(1 / 4 + (5 - 1.5) ** 2 / 5);
    expect(confidenceBoundOfMean(fit, 5, 0.95, 'lower')).toBeCloseTo(9.95 - 4 - half, 10);
    expect(confidenceBoundOfMean(fit, 5, 0.95, 'upper')).toBeCloseTo(9.95 - 4 + half, 10);
    expect(confidenceBoundOfMean(fit, 5, 1, 'upper')).toBeNull();
  });
});
