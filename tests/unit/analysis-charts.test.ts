/**
 * The analysis screens' pure part (src/analysis/): number guards, CSV, the ECharts options of the
 * line charts, heat grids and ΔE chart, and the comparison matrix. Invented data throughout.
 */
import { describe, expect, it } from 'vitest';
import type { StudyAnalysis as ServerStudyAnalysis } from '../../server/services/analysis';
import { deltaEChart, fitCurves, fitEnd, heatGrid, HEAT_PALETTE, heatSteps, LARGE_POINTS, measuredChart, niceRange, SERIES_NAMES, type ChartOption } from '../../src/analysis/charts';
import { compareCell, compareMatrix, firstFailureText, pickVariants } from '../../src/analysis/compare';
import { toCsv } from '../../src/analysis/csv';
import { DASH, levelValue, logGap, monthsText, num, slug, suggestionHeadline, suggestionNote, suggestionState, valueWords, withUnit } from '../../src/analysis/format';
import type { Series, StudyAnalysis } from '../../src/analysis/types';
import { SUGGEST_CAUTION, suggestShelfLife, type SuggestCondition } from '../../shared/compute/suggest';

// The server's shape must keep fitting the client's copy (checked by vue-tsc; no runtime effect).
export function serverShapeFitsClient(x: ServerStudyAnalysis): StudyAnalysis {
  return x;
}

const W = (n: number) => (n * 7) / (365.25 / 12);

/** Two variants (one lot each, two samples per cell), fridge control, 25 °C real time, 45 °C, freeze-thaw. */
function fixture(): StudyAnalysis {
  const variants = [
    { id: 1, code: 'A', name: '4 % emulsifier', lots: ['L-A'] },
    { id: 2, code: 'B', name: '5 % emulsifier + xanthan', lots: ['L-B'] },
  ];
  const conditions = [
    { id: 10, name: '45 °C', kind: 'constant', role: 'accelerated', setpointC: 45, location: 'oven 2', mkt: { mktC: 45.21, minC: 43.9, maxC: 46.2, meanC: 45.1, readings: 2184, from: '2026-09-01', to: '2026-12-01', firstOn: '2026-09-01', lastOn: '2026-12-01' } },
    { id: 11, name: '4 °C control', kind: 'constant', role: 'control', setpointC: 4, location: 'fridge 1', mkt: null },
    { id: 12, name: '25 °C / 60 % RH', kind: 'constant', role: 'real_time', setpointC: 25, location: 'cabinet', mkt: null },
    { id: 13, name: 'Freeze-thaw', kind: 'cycling', role: 'stress', setpointC: null, location: 'freezer', mkt: null },
  ];
  const attributes = [
    { id: 100, code: 'ph', name: 'pH', kind: 'measured', unit: null, decimals: 2, criterion: { kind: 'change_abs' as const, max: 0.5 }, scale: null },
    {
      id: 101,
      code: 'separation',
      name: 'Separation',
      kind: 'graded',
      unit: null,
      decimals: 0,
      criterion: { kind: 'worst_grade' as const, grade: 1 },
      scale: [
        { grade: 0, label: 'None' },
        { grade: 1, label: 'Faint oil sheen' },
        { grade: 2, label: 'Oil droplets on surface' },
        { grade: 3, label: 'Visible layer' },
        { grade: 4, label: 'Fully split' },
      ],
    },
    { id: 102, code: 'odor', name: 'Odor', kind: 'compared', unit: null, decimals: 0, criterion: { kind: 'worst_compared' as const, level: 'slight' as const }, scale: null },
  ];
  const weeks = [0, 1, 2, 4, 8, 12];
  const series: Series[] = [];
  let cp = 1000;
  const cpId = new Map<string, number>();
  const idOf = (c: number, label: string) => {
    const k = `${c}:${label}`;
    if (!cpId.has(k)) cpId.set(k, cp++);
    return cpId.get(k) as number;
  };
  for (const v of variants) {
    for (const c of conditions) {
      const labels = c.kind === 'cycling' ? ['Day 0', 'Cycle 1', 'Cycle 2', 'Cycle 3'] : weeks.map((w) => (w === 0 ? 'Day 0' : `Week ${w}`));
      const monthsOf = (i: number) => (c.kind === 'cycling' ? (i * 2) / (365.25 / 12) : W(weeks[i]));
      const mk = (attr: number, val: (i: number, s: number) => number | string, verdict: (i: number, x: number | string) => 'pass' | 'fail' | 'no_criterion'): Series => ({
        studyAttributeId: attr,
        variantId: v.id,
        batchId: v.id,
        lotCode: v.lots[0],
        studyConditionId: c.id,
        points: labels.flatMap((label, i) =>
          [0, 1].map((s) => {
            const value = val(i, s);
            return { checkpointId: idOf(c.id, label), label, months: monthsOf(i), dueDate: '2026-10-01', value, verdict: verdict(i, value), sampleCode: `${v.code}${c.id}-${s + 1}` };
          }),
        ),
      });
      const hot = c.id === 10;
      const isB = v.id === 2;
      // pH drifts down 0.02 per week at 45 °C (B: 0.06 per week, failing after week 8)
      series.push(
        mk(
          100,
          (i, s) => Math.round((5.5 - (hot ? (isB ? 0.06 : 0.02) : 0.004) * (c.kind === 'cycling' ? i : weeks[i]) + (s ? 0.01 : -0.01)) * 100) / 100,
          (_i, x) => (Math.abs((x as number) - 5.5) > 0.5 ? 'fail' : 'pass'),
        ),
      );
      series.push(mk(101, (i) => (isB && hot && weeks[i] >= 8 ? 3 : 0), (_i, x) => ((x as number) > 1 ? 'fail' : 'pass')));
      series.push(mk(102, (i) => (isB && hot && weeks[i] >= 12 ? 'marked' : i > 2 && hot ? 'slight' : 'no_change'), (_i, x) => (x === 'marked' ? 'fail' : 'pass')));
    }
  }
  const limits = variants.map((v) => ({ studyAttributeId: 100, variantId: v.id, limit: { lower: 5, upper: 6, decimals: 2 }, basis: 'day-0 mean 5.50 ± 0.5' }));
  const line = { n: 12, intercept: 5.5, slope: -0.0174, residualSD: 0.012, df: 10, xMean: 1.25, sxx: 10.6, batch: null, tMax: W(12) };
  const regressions = variants.map((v) => ({
    studyAttributeId: 100,
    variantId: v.id,
    studyConditionId: 12,
    limit: { lower: 5, upper: 6, decimals: 2 },
    months: 27.3,
    status: 'crossed',
    message: 'Pooled: the one-sided 97.5 % (two-sided 95 %) lower confidence bound of the mean meets the lower limit 5.00 at 27.30 months.',
    model: 'pooled',
    lines: [line],
    levelPerSide: 0.975,
    tValue: 2.228,
    horizonMonths: 60,
    excluded: [],
    alternative: null,
  }));
  const suggestion = (months: number | null) => ({
    months,
    basis: months === null ? ('none' as const) : ('projection_only' as const),
    confidenceNote: months === null ? 'No figure yet.' : 'From a rule of thumb, not a prediction: verify with real-time data.',
    governingReason: months === null ? null : 0,
    reasons: [],
    gates: [],
    blocked: false,
    storageInstructions: [],
    labelDating: null,
    caution: SUGGEST_CAUTION,
  });
  return {
    studyId: 7,
    q10: 2,
    variants,
    conditions,
    attributes,
    series,
    limits,
    regressions,
    deltaE: [
      { variantId: 1, studyConditionId: 10, sampleCode: 'A10-1', points: [{ label: 'Day 0', months: 0, de76: 0, de00: 0 }, { label: 'Week 4', months: W(4), de76: 1.2, de00: 0.8 }] },
      { variantId: 1, studyConditionId: 10, sampleCode: 'A10-2', points: [{ label: 'Day 0', months: 0, de76: 0, de00: 0 }, { label: 'Week 4', months: W(4), de76: 1.6, de00: 1.0 }] },
      { variantId: 2, studyConditionId: 13, sampleCode: 'B13-1', points: [{ label: 'Day 0', months: 0, de76: 0, de00: 0 }, { label: 'Cycle 3', months: 0.2, de76: null, de00: 2.5 }] },
    ],
    firstFailures: [
      { variantId: 2, studyConditionId: 10, label: 'Week 8', months: W(8), attributes: ['pH', 'Separation'] },
      { variantId: 1, studyConditionId: 10, label: null, months: null, attributes: [] },
    ],
    suggestions: [
      { variantId: 1, result: suggestion(11) },
      { variantId: 2, result: suggestion(null) },
    ],
  };
}

/** Every number anywhere in an option (functions skipped). */
function numbersIn(x: unknown, out: number[] = []): number[] {
  if (typeof x === 'number') out.push(x);
  else if (Array.isArray(x)) x.forEach((y) => numbersIn(y, out));
  else if (x && typeof x === 'object') Object.values(x).forEach((y) => numbersIn(y, out));
  return out;
}
function stringsIn(x: unknown, out: string[] = []): string[] {
  if (typeof x === 'string') out.push(x);
  else if (Array.isArray(x)) x.forEach((y) => stringsIn(y, out));
  else if (x && typeof x === 'object') Object.values(x).forEach((y) => stringsIn(y, out));
  return out;
}
type AnySeries = { type: string; name?: string; data?: unknown[]; markArea?: { data: unknown }; markLine?: { data: { xAxis?: number; yAxis?: number }[] }; showSymbol?: boolean; sampling?: string; symbol?: string; large?: boolean };
const seriesOf = (o: ChartOption) => o.series as AnySeries[];

describe('number guards (never NaN, Infinity or undefined on screen)', () => {
  it('writes a dash for anything that is not a finite number', () => {
    for (const bad of [NaN, Infinity, -Infinity, undefined, null, '5', {}]) expect(num(bad)).toBe(DASH);
    expect(num(5.4321, 2)).toBe('5.43');
    expect(num(-0.001, 2)).toBe('0.00');
    expect(num(-1.5, 1)).toBe('−1.5');
    expect(num(3, NaN)).toBe('3.00');
    expect(withUnit(12400, 'mPa·s', 0)).toBe('12400 mPa·s');
    expect(withUnit(NaN, 'mPa·s', 0)).toBe(DASH);
    expect(monthsText(11)).toBe('11 months');
    expect(monthsText(1)).toBe('1 month');
    expect(monthsText(3.684)).toBe('3.7 months');
    expect(monthsText(Infinity)).toBe(DASH);
    expect(suggestionHeadline({ months: null, governingReason: null, reasons: [] })).toBe('Not enough data yet');
    expect(suggestionHeadline({ months: 11, governingReason: null, reasons: [] })).toBe('11 months');
    expect(slug('45 °C / 75 % RH')).toBe('45-c-75-rh');
  });

  it('reads grades, comparisons and pass/fail as steps from 0 (best)', () => {
    expect(levelValue('graded', 3)).toBe(3);
    expect(levelValue('compared', 'marked')).toBe(2);
    expect(levelValue('compared', 'nonsense')).toBeNull();
    expect(levelValue('pass_fail', false)).toBe(1);
    expect(valueWords({ kind: 'graded', unit: null, decimals: 0, scale: [{ grade: 3, label: 'Visible layer' }] }, 3)).toBe('3 Visible layer');
    expect(valueWords({ kind: 'compared', unit: null, decimals: 0, scale: null }, 'slight')).toBe('slight');
  });
});

describe('the suggested shelf life headline', () => {
  // Invented data, judged by the shared engine (shared/compute/suggest.ts) as the analysis page does.
  const oven = (passedWeek1: boolean, failedAt0 = false): SuggestCondition => ({
    name: '40 °C / 75 % RH',
    kind: 'constant',
    role: 'accelerated',
    setpointC: 40,
    attributes: [{ name: 'Odor', kind: 'compared', observations: [{ months: 0, passed: !failedAt0 }, { months: W(1), passed: passedWeek1 }] }],
  });
  const realTime = (passed: boolean[]): SuggestCondition => ({
    name: '25 °C / 60 % RH',
    kind: 'constant',
    role: 'real_time',
    setpointC: 25,
    attributes: [{ name: 'Separation', kind: 'graded', observations: passed.map((p, i) => ({ months: i * 3, passed: p })) }],
  });

  it('one week passed at 40 °C projects under a month: too early to tell, not "0 months"', () => {
    const r = suggestShelfLife({ q10: 2, conditions: [oven(true)] });
    expect(r.months).toBe(0); // 0.23 months x 2^1.5 = 0.65
    expect(suggestionState(r)).toBe('too_early');
    expect(suggestionHeadline(r)).toBe('Too early to tell');
    expect(suggestionNote(r)).toMatch(/record more checkpoints/);
  });

  it('a failure at the first real-time checkpoint is a real result under a month', () => {
    const r = suggestShelfLife({ conditions: [realTime([false, false])] });
    expect(r.months).toBe(0);
    expect(r.basis).toBe('real_time');
    expect(suggestionState(r)).toBe('failed_early');
    expect(suggestionHeadline(r)).toBe('Under 1 month');
    expect(suggestionNote(r)).toMatch(/Failed early/);
  });

  it('a failure at the first accelerated checkpoint is a real result too', () => {
    const r = suggestShelfLife({ conditions: [oven(false)] });
    expect(r.months).toBe(0);
    expect(suggestionState(r)).toBe('failed_early');
  });

  it('day 0 alone gives no figure: not enough data yet; twelve weeks passed give the figure', () => {
    const none = suggestShelfLife({ conditions: [realTime([true])] });
    expect(none.months).toBeNull();
    expect(suggestionState(none)).toBe('none');
    expect(suggestionHeadline(none)).toBe('Not enough data yet');
    expect(suggestionNote(none)).toBeNull();
    const twelveWeeks = suggestShelfLife({
      q10: 2,
      conditions: [{ ...oven(true), attributes: [{ name: 'Odor', kind: 'compared', observations: [0, 4, 8, 12].map((w) => ({ months: W(w), passed: true })) }] }],
    });
    expect(suggestionState(twelveWeeks)).toBe('figure');
    expect(suggestionHeadline(twelveWeeks)).toBe('7 months'); // 2.76 months x 2^1.5 = 7.8
    expect(suggestionNote(twelveWeeks)).toBeNull();
  });
});

describe('CSV built in the browser', () => {
  it('quotes per RFC 4180, keeps numbers plain, defuses formulas, and starts with a UTF-8 BOM', () => {
    const csv = toCsv(['Sample', 'Value', 'Note'], [
      ['A-1', 5.5, 'ok'],
      ['B, 2', -0.25, 'said "slight"'],
      ['=HYPERLINK("x")', NaN, null],
      ['+1', 0.1 + 0.2, 'two\nlines'],
    ]);
    expect(csv.startsWith('\uFEFF')).toBe(true);
    const lines = csv.slice(1).split('\r\n');
    expect(lines[0]).toBe('Sample,Value,Note');
    expect(lines[1]).toBe('A-1,5.5,ok');
    expect(lines[2]).toBe('"B, 2",-0.25,"said ""slight"""');
    expect(lines[3]).toBe(`"'=HYPERLINK(""x"")",,`);
    expect(lines[4]).toBe(`'+1,0.3,"two\nlines"`);
    expect(csv.endsWith('\r\n')).toBe(true);
  });
});

describe('line charts of measured attributes', () => {
  const a = fixture();
  const ph = a.attributes[0];

  it('draws a panel per condition with a line per variant, day-0 marks, failing points and the limit band', () => {
    const chart = measuredChart(a, ph, 'condition', 'keepwell-study-7-ph');
    // constant conditions by setpoint first, then freeze-thaw
    expect(chart.panels.map((p) => p.title)).toEqual(['4 °C control', '25 °C / 60 % RH', '45 °C', 'Freeze-thaw']);
    const hot = chart.panels[2];
    expect(hot.mkt).toBe('MKT 45.21 °C from 2,184 readings');
    expect(chart.panels[0].mkt).toBe('MKT: no chamber log for this period');
    const s = seriesOf(hot.option);
    const lines = s.filter((x) => x.type === 'line' && x.name?.startsWith('A') || x.name?.startsWith('B'));
    expect(lines.map((x) => x.name)).toContain('A: 4 % emulsifier');
    expect(lines.map((x) => x.name)).toContain('B: 5 % emulsifier + xanthan');
    // the line goes through the mean of the two samples at each checkpoint
    const lineA = s.find((x) => x.type === 'line' && x.name === 'A: 4 % emulsifier')!;
    expect(lineA.data).toHaveLength(6);
    expect((lineA.data![0] as number[])[1]).toBeCloseTo(5.5, 9);
    const day0 = s.find((x) => x.name === SERIES_NAMES.day0)!;
    expect(day0.symbol).toBe('diamond');
    expect(day0.data).toHaveLength(2);
    const fails = s.find((x) => x.name === SERIES_NAMES.fail)!;
    // B at 45 °C: 5.5 - 0.06*12 = 4.78 ± 0.01 at week 12 fails; week 8 (5.02 ± 0.01) passes
    expect(fails.data!.length).toBe(2);
    expect(fails.symbol).toMatch(/^path:\/\//);
    const limits = s.find((x) => x.name === SERIES_NAMES.limits)!;
    expect(limits.markArea!.data).toEqual([[{ yAxis: 5 }, { yAxis: 6 }]]);
    expect(limits.markLine!.data.map((d) => d.yAxis)).toEqual([5, 6]);
    // the failing results are also listed, in time order
    expect(chart.failing.map((f) => [f.variant, f.condition, f.label, f.value])).toEqual([
      ['B', '45 °C', 'Week 12', '4.77'],
      ['B', '45 °C', 'Week 12', '4.79'],
    ]);
    // CSV: every reading with its verdict and limits
    expect(hot.csv.rows).toHaveLength(2 * 6 * 2);
    expect(hot.csv.header).toContain('Verdict');
    // every panel shares one y range that holds the limits and the data
    const ys = chart.panels.map((p) => p.option.yAxis as { min: number; max: number });
    expect(new Set(ys.map((y) => `${y.min}:${y.max}`)).size).toBe(1);
    expect(ys[0].min).toBeLessThanOrEqual(4.77);
    expect(ys[0].max).toBeGreaterThanOrEqual(6);
  });

  it('draws the fitted mean line and its one-sided bound where ICH Q1E regression was fitted, and where it meets the limit', () => {
    const chart = measuredChart(a, ph, 'condition', 'x');
    const room = chart.panels[1];
    const s = seriesOf(room.option);
    expect(s.filter((x) => x.name === SERIES_NAMES.fit)).toHaveLength(2);
    const bounds = s.filter((x) => x.name === SERIES_NAMES.bound);
    // two-sided limit: a lower and an upper bound per variant
    expect(bounds).toHaveLength(4);
    expect(bounds.filter((b) => b.markLine?.data?.[0]?.xAxis === 27.3)).toHaveLength(2);
    // the crossing's months are written above the plot at the line's top; the limit labels keep to the left
    // end so the two never overlap (they did at the right end)
    const crossingLabel = (bounds.find((b) => b.markLine)!.markLine as unknown as { label: { position: string } }).label;
    expect(crossingLabel.position).toBe('end');
    const limitsLabel = (s.find((x) => x.name === SERIES_NAMES.limits)!.markLine as unknown as { label: { position: string } }).label;
    expect(limitsLabel.position).toBe('insideStartTop');
    expect(room.fits[0]).toMatch(/27\.30 months/);
    // other conditions have no fit, and keep a month range of their own (the fit reaches 27.3 x 1.08 months)
    expect(seriesOf(chart.panels[2].option).some((x) => x.name === SERIES_NAMES.fit)).toBe(false);
    expect((room.option.xAxis as { max: number }).max).toBe(30);
    expect((chart.panels[2].option.xAxis as { max: number }).max).toBe(3);
  });

  it('computes the bound as ŷ ± t·s·sqrt(1/n + (t - t̄)²/Sxx) with the tabled t', () => {
    // ICH Q1E (2003) Appendix B formula; t(0.95, 3) = 2.353 from the NIST/SEMATECH e-Handbook
    // table of t critical values. Invented line: n 5, 100 - 0.5 t, s 0.5, t̄ 6, Sxx 90.
    const line = { n: 5, intercept: 100, slope: -0.5, residualSD: 0.5, df: 3, xMean: 6, sxx: 90, batch: null, tMax: 12 };
    const c = fitCurves(line, { lower: 90 }, 0.95, 12, 12);
    expect(c.upper).toHaveLength(0);
    expect(c.fit[0]).toEqual([0, 100]);
    const expected0 = 100 - 2.353 * 0.5 * Math.sqrt(1 / 5 + 36 / 90);
    expect(c.lower[0][1]).toBeCloseTo(expected0, 3);
    // at t̄ the half-width is t·s/sqrt(n)
    expect(c.lower[6][1]).toBeCloseTo(97 - (2.353 * 0.5) / Math.sqrt(5), 3);
    expect(fitEnd({ status: 'crossed', months: 20 }, line)).toBeCloseTo(21.6, 9);
    expect(fitEnd({ status: 'not_reached', months: null }, line)).toBe(18);
    expect(fitEnd({ status: 'crossed', months: 500 }, line)).toBe(60);
  });

  it('groups by variant: a panel per variant with a line per constant condition; cycles are left to the condition view', () => {
    const chart = measuredChart(a, ph, 'variant', 'x');
    expect(chart.panels.map((p) => p.title)).toEqual(['A: 4 % emulsifier', 'B: 5 % emulsifier + xanthan']);
    const names = seriesOf(chart.panels[0].option).filter((x) => x.type === 'line' && x.data?.length).map((x) => x.name);
    expect(names).toEqual(expect.arrayContaining(['4 °C control', '25 °C / 60 % RH', '45 °C']));
    expect(names).not.toContain('Freeze-thaw');
    expect(chart.note).toMatch(/Freeze-thaw/);
  });

  it('charts freeze-thaw by checkpoint, not by months', () => {
    const ft = measuredChart(a, ph, 'condition', 'x').panels[3];
    expect((ft.option.xAxis as { type: string; data: string[] }).type).toBe('category');
    expect((ft.option.xAxis as { data: string[] }).data).toEqual(['Day 0', 'Cycle 1', 'Cycle 2', 'Cycle 3']);
  });

  it('never puts a non-finite number or the words NaN/undefined into an option', () => {
    const broken = fixture();
    broken.series[0].points[1].value = null;
    broken.series[0].points[2].months = NaN;
    broken.limits[0].limit = { lower: null, upper: 6 };
    broken.regressions[0] = { ...broken.regressions[0], months: null, status: 'insufficient_data', levelPerSide: null, tValue: null, horizonMonths: 60, excluded: [], alternative: null };
    for (const g of ['condition', 'variant'] as const) {
      for (const p of measuredChart(broken, broken.attributes[0], g, 'x').panels) {
        expect(numbersIn(p.option).every(Number.isFinite), p.title).toBe(true);
        expect(stringsIn(p.option).join(' ')).not.toMatch(/NaN|undefined|Infinity/);
      }
    }
    // tooltips cope with junk
    const fmt = (measuredChart(broken, broken.attributes[0], 'condition', 'x').panels[0].option.tooltip as { formatter: (p: unknown) => string }).formatter;
    expect(fmt({ seriesName: '<b>x</b>', value: [NaN, undefined, 'Week 1'] })).not.toMatch(/NaN|undefined|<b>x/);
  });

  it(`switches to sampled lines without symbols or animation above ${LARGE_POINTS} readings (10 000 here)`, () => {
    const big = fixture();
    const n = 10_000;
    big.series = [
      {
        studyAttributeId: 100,
        variantId: 1,
        batchId: 1,
        lotCode: 'L-A',
        studyConditionId: 12,
        points: Array.from({ length: n }, (_, i) => ({
          checkpointId: i + 1,
          label: `Reading ${i + 1}`,
          months: (i / n) * 36,
          dueDate: '2026-10-01',
          value: 5.5 + 0.1 * Math.sin(i / 50),
          verdict: 'pass' as const,
          sampleCode: 'A12-1',
        })),
      },
    ];
    const started = performance.now();
    const chart = measuredChart(big, big.attributes[0], 'condition', 'x');
    const ms = performance.now() - started;
    const room = chart.panels[1];
    expect(room.points).toBe(n);
    expect(room.large).toBe(true);
    expect(room.option.animation).toBe(false);
    const line = seriesOf(room.option).find((x) => x.name === 'A: 4 % emulsifier')!;
    expect(line.showSymbol).toBe(false);
    expect(line.sampling).toBe('lttb');
    expect(line.data).toHaveLength(n);
    expect(room.option.dataZoom).toBeDefined();
    expect(room.csv.rows).toHaveLength(n);
    // small panels keep their symbols and a short animation
    expect(chart.panels[0].large).toBe(false);
    console.info(`measuredChart with ${n} readings: ${ms.toFixed(1)} ms`);
    expect(ms).toBeLessThan(2000);
  });

  it('rounds axis ranges to 1, 2 or 5 steps', () => {
    expect(niceRange(4.77, 6)).toEqual({ min: 4.5, max: 6, step: 0.5 });
    expect(niceRange(0, 11.04, 6)).toEqual({ min: 0, max: 12, step: 2 });
    expect(niceRange(5, 5)).toEqual({ min: 4.7, max: 5.3, step: 0.1 });
    expect(niceRange(NaN, 1)).toBeNull();
  });
});

describe('heat grids of graded and compared attributes', () => {
  const a = fixture();

  it('puts each sample in a row and each checkpoint in a column, with the grade in every cell and ✕ on failures', () => {
    const g = heatGrid(a, a.attributes[1], 'condition', 'keepwell-study-7-separation');
    // 2 variants x 4 conditions x 2 samples
    expect(g.rows).toBe(16);
    const x = g.option.xAxis as { data: string[] };
    expect(x.data.slice(0, 2)).toEqual(['Day 0', 'Cycle 1']);
    expect(x.data).toContain('Week 12');
    const y = g.option.yAxis as { data: string[] };
    expect(y.data[0]).toBe('4 °C control · A · A11-1');
    const cells = (seriesOf(g.option)[0].data as { value: unknown[] }[]).map((d) => d.value);
    const failing = cells.filter((v) => String(v[3]).includes('✕'));
    // B at 45 °C, weeks 8 and 12, two samples each
    expect(failing).toHaveLength(4);
    expect(failing[0][3]).toBe('3 ✕');
    expect(failing[0][4]).toBe('3 Visible layer');
    expect(g.failing).toHaveLength(4);
    // the legend says what each grade means, in our palette
    const vm = g.option.visualMap as { pieces: { value: number; label: string; color: string }[] };
    expect(vm.pieces.map((p) => p.label)).toEqual(['0 None', '1 Faint oil sheen', '2 Oil droplets on surface', '3 Visible layer', '4 Fully split']);
    expect(vm.pieces.map((p) => p.color)).toEqual(HEAT_PALETTE);
    expect(g.height).toBeGreaterThan(16 * 26);
  });

  it('writes comparisons with the control in words, and spreads 4 levels over the palette', () => {
    const g = heatGrid(a, a.attributes[2], 'variant', 'x');
    const vm = g.option.visualMap as { pieces: { label: string }[] };
    expect(vm.pieces.map((p) => p.label)).toEqual(['no change vs control', 'slight vs control', 'marked vs control', 'severe vs control']);
    const cells = (seriesOf(g.option)[0].data as { value: unknown[] }[]).map((d) => d.value[3]);
    expect(cells).toContain('marked ✕');
    expect(cells).toContain('slight');
    expect(heatSteps([{ value: 0, label: 'Pass' }, { value: 1, label: 'Fail' }]).map((s) => s.color)).toEqual([HEAT_PALETTE[0], HEAT_PALETTE[4]]);
    // variant grouping puts the variant first in the row label
    expect((g.option.yAxis as { data: string[] }).data[0]).toBe('A · 4 °C control · A11-1');
  });
});

describe('color difference chart', () => {
  it('averages ΔE over samples per checkpoint, keeps cycles to the table, and draws the common ΔE00 2 line', () => {
    const a = fixture();
    const d = deltaEChart(a, 'de00', 'condition', 'x');
    const line = seriesOf(d.option).find((x) => x.name === 'A · 45 °C')!;
    expect((line.data![1] as number[])[1]).toBeCloseTo(0.9, 9);
    expect(seriesOf(d.option)[0].markLine!.data[0].yAxis).toBe(2);
    expect(d.latest.find((r) => r.condition === 'Freeze-thaw')).toMatchObject({ label: 'Cycle 3', de76: null, de00: 2.5 });
    expect(d.note).toMatch(/Freeze-thaw/);
    expect(d.csv.rows).toHaveLength(6);
    const d76 = deltaEChart(a, 'de76', 'variant', 'x');
    expect(seriesOf(d76.option).some((x) => x.markLine)).toBe(false);
  });
});

describe('comparison of variants', () => {
  const a = fixture();

  it('picks 2 to 4 known variants, in the study order', () => {
    const vs = [1, 2, 3, 4, 5].map((id) => ({ id, code: String(id), name: '', lots: [] }));
    expect(pickVariants(vs, [])).toEqual([1, 2]);
    expect(pickVariants(vs, [5, 3])).toEqual([3, 5]);
    expect(pickVariants(vs, [1, 2, 3, 4, 5])).toEqual([1, 2, 3, 4]);
    expect(pickVariants(vs, [4, 99])).toEqual([4, 1]);
  });

  it('gives the latest result and its verdict for every attribute at every condition', () => {
    const m = compareMatrix(a, [1, 2]);
    expect(m.conditions.map((c) => c.condition.name)).toEqual(['4 °C control', '25 °C / 60 % RH', '45 °C', 'Freeze-thaw']);
    const hot = m.conditions[2];
    const [ph, sep, odor] = hot.rows;
    expect(ph.cells[0]).toMatchObject({ text: '5.26', state: 'pass', at: 'Week 12', readings: 2, firstFail: null });
    expect(ph.cells[1]).toMatchObject({ text: '4.78', state: 'fail', at: 'Week 12', firstFail: 'Week 12' });
    expect(sep.cells[1]).toMatchObject({ text: '3 Visible layer', state: 'fail', firstFail: 'Week 8' });
    expect(odor.cells[0]).toMatchObject({ text: 'slight', state: 'pass' });
    expect(odor.cells[1]).toMatchObject({ text: 'marked', state: 'fail' });
    expect(firstFailureText(hot.firstFailures[1])).toMatch(/^Week 8 \(1\.84 months\): pH, Separation$/);
    expect(firstFailureText(hot.firstFailures[0])).toBe('None so far');
    expect(m.suggestions.map((s) => s?.months)).toEqual([11, null]);
    expect(compareCell(a, a.attributes[0], 1, 999)).toMatchObject({ text: DASH, state: 'none' });
  });
});

describe('chamber log coverage beside the MKT', () => {
  it('names a missing start or end of more than a day, and is silent when the log covers the study', () => {
    expect(logGap({ from: '2026-10-03', to: '2026-12-02', firstOn: '2026-11-02', lastOn: '2026-12-02' })).toBe(
      'No chamber log for the first 30 days from day 0: the MKT covers only the logged days.',
    );
    expect(logGap({ from: '2026-10-03', to: '2026-12-02', firstOn: '2026-10-03', lastOn: '2026-11-20' })).toBe(
      'No chamber log for the last 12 days: the MKT covers only the logged days.',
    );
    expect(logGap({ from: '2026-10-03', to: '2026-12-02', firstOn: '2026-10-04', lastOn: '2026-12-01' })).toBeNull();
  });
});
