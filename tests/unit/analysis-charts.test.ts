/**
 * The analysis screens' pure part (src/analysis/): number guards, CSV, the ECharts options of the
 * line charts, heat grids and ΔE chart, and the comparison matrix. Invented data throughout.
 */
import { describe, expect, it } from 'vitest';
import type { StudyAnalysis as ServerStudyAnalysis } from '../../server/services/analysis';
import {
  BOUND_DASH,
  deltaEChart,
  fitCurves,
  fitEnd,
  fitNote,
  FIT_WIDTH,
  heatGrid,
  HEAT_PALETTE,
  heatSteps,
  LARGE_POINTS,
  LEGEND_TEXT_WIDTH,
  legendLayout,
  LIMIT_DASH,
  measuredChart,
  niceRange,
  SERIES_NAMES,
  VARIANT_COLORS,
  VARIANT_MARKERS,
  variantStyle,
  type ChartOption,
} from '../../src/analysis/charts';
import { compareCell, compareCheckpoints, compareMatrix, firstFailureText, pickVariants } from '../../src/analysis/compare';
import { reasonWithNotes, regressionNotes } from '../../src/analysis/reason-notes';
import { toCsv } from '../../src/analysis/csv';
import { DASH, levelValue, logGap, monthsText, num, slug, suggestionHeadline, suggestionNote, suggestionState, valueWords, withUnit } from '../../src/analysis/format';
import type { Series, StudyAnalysis } from '../../src/analysis/types';
import { SUGGEST_CAUTION, suggestShelfLife, type SuggestCondition } from '../../shared/compute/suggest';
import { limitValueText } from '../../shared/compute/shelf-life';
import { cycleOf, limitShown, stepDecimals, tickText } from '../../shared/chart-style';

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
  // the initial test is one checkpoint, t = 0 of every condition (its readings join each condition's series)
  const idOf = (c: number, label: string) => {
    const k = label === 'Initial' ? label : `${c}:${label}`;
    if (!cpId.has(k)) cpId.set(k, cp++);
    return cpId.get(k) as number;
  };
  for (const v of variants) {
    for (const c of conditions) {
      const labels = c.kind === 'cycling' ? ['Initial', 'Cycle 1', 'Cycle 2', 'Cycle 3'] : weeks.map((w) => (w === 0 ? 'Initial' : `Week ${w}`));
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
            const sampleCode = label === 'Initial' ? `${v.code}0-${s + 1}` : `${v.code}${c.id}-${s + 1}`;
            return { checkpointId: idOf(c.id, label), label, months: monthsOf(i), dueDate: '2026-10-01', value, verdict: verdict(i, value), sampleCode };
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
      { variantId: 1, studyConditionId: 10, sampleCode: 'A10-1', points: [{ label: 'Initial', months: 0, de76: 0, de00: 0 }, { label: 'Week 4', months: W(4), de76: 1.2, de00: 0.8 }] },
      { variantId: 1, studyConditionId: 10, sampleCode: 'A10-2', points: [{ label: 'Initial', months: 0, de76: 0, de00: 0 }, { label: 'Week 4', months: W(4), de76: 1.6, de00: 1.0 }] },
      { variantId: 2, studyConditionId: 13, sampleCode: 'B13-1', points: [{ label: 'Initial', months: 0, de76: 0, de00: 0 }, { label: 'Cycle 3', months: 0.2, de76: null, de00: 2.5 }] },
    ],
    firstFailures: [
      // 5 pulls x 2 samples x 3 attributes after the initial test
      { variantId: 2, studyConditionId: 10, label: 'Week 8', months: W(8), attributes: ['pH', 'Separation'], dataPoints: 30 },
      { variantId: 1, studyConditionId: 10, label: null, months: null, attributes: [], dataPoints: 30 },
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
    // the initial test: t = 0 of every condition, named "Initial" (never "Day 0")
    const initial = s.find((x) => x.name === SERIES_NAMES.initial)!;
    expect(SERIES_NAMES.initial).toBe('Initial');
    expect(initial.symbol).toBe('emptyDiamond');
    expect(initial.data).toHaveLength(2);
    expect((initial.data![0] as unknown[])[2]).toBe('Initial');
    const fails = s.find((x) => x.name === SERIES_NAMES.fail)!;
    // B at 45 °C: 5.5 - 0.06*12 = 4.78 ± 0.01 at week 12 fails; week 8 (5.02 ± 0.01) passes
    expect(fails.data!.length).toBe(2);
    expect(fails.symbol).toMatch(/^path:\/\//);
    // A and B share their limits: one band, one line per side, one label each
    const limits = s.find((x) => x.name === SERIES_NAMES.limits)!;
    expect(limits.markArea!.data).toEqual([[{ yAxis: 5 }, { yAxis: 6 }]]);
    expect(limits.markLine!.data.map((d) => d.yAxis)).toEqual([5, 6]);
    expect(limits.markLine!.data.map((d) => (d as { name: string }).name)).toEqual(['lower limit 5.00', 'upper limit 6.00']);
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
    expect(room.fits[0].message).toMatch(/27\.30 months/);
    expect(room.fits[0]).toMatchObject({ who: 'A: 4 % emulsifier', color: VARIANT_COLORS[0], warning: null, excluded: [], alternative: null });
    // the mean solid and heavier, its bound dashed, both in the variant's color; a legend entry each, drawn in ink
    const fitA = s.find((x) => x.name === SERIES_NAMES.fit) as AnySeries & { color: string; lineStyle: { type: unknown; width: number } };
    expect(fitA.color).toBe(VARIANT_COLORS[0]);
    expect(fitA.lineStyle).toMatchObject({ type: 'solid', width: FIT_WIDTH });
    const boundB = bounds[2] as AnySeries & { color: string; lineStyle: { type: unknown } };
    expect(boundB.color).toBe(VARIANT_COLORS[1]);
    expect(boundB.lineStyle.type).toEqual(BOUND_DASH);
    const legend = (room.option.legend as { data: { name: string; lineStyle?: { type: unknown } }[] }).data;
    expect(legend.map((l) => l.name)).toEqual([SERIES_NAMES.limits, 'A: 4 % emulsifier', 'B: 5 % emulsifier + xanthan', SERIES_NAMES.fit, SERIES_NAMES.bound, SERIES_NAMES.initial]);
    expect(legend.find((l) => l.name === SERIES_NAMES.bound)!.lineStyle!.type).toEqual(BOUND_DASH);
    expect(legend.find((l) => l.name === SERIES_NAMES.limits)!.lineStyle!.type).toEqual(LIMIT_DASH);
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
    // a study longer than 60 months: drawn as far as the engine searched (shared/compute/shelf-life.ts searchHorizon)
    expect(fitEnd({ status: 'crossed', months: 69, horizonMonths: 144 }, { tMax: 72 })).toBeCloseTo(74.52, 9);
  });

  it('groups by variant: a panel per variant with a line per constant condition; cycles are left to the condition view', () => {
    const chart = measuredChart(a, ph, 'variant', 'x');
    expect(chart.panels.map((p) => p.title)).toEqual(['A: 4 % emulsifier', 'B: 5 % emulsifier + xanthan']);
    const names = seriesOf(chart.panels[0].option).filter((x) => x.type === 'line' && x.data?.length).map((x) => x.name);
    expect(names).toEqual(expect.arrayContaining(['4 °C control', '25 °C / 60 % RH', '45 °C']));
    expect(names).not.toContain('Freeze-thaw');
    expect(chart.note).toMatch(/Freeze-thaw/);
  });

  it('charts freeze-thaw against cycles, never months: the initial test at cycle 0, labelled "Initial"', () => {
    const ft = measuredChart(a, ph, 'condition', 'x').panels[3];
    expect(ft.axis).toBe('cycles');
    const x = ft.option.xAxis as { type: string; name: string; min: number; max: number; interval: number; axisLabel: { formatter: (v: number) => string } };
    expect(x.type).toBe('value');
    expect(x.name).toBe('Freeze-thaw cycles');
    expect([x.min, x.max, x.interval]).toEqual([0, 3, 1]);
    expect(x.axisLabel.formatter(0)).toBe('Initial');
    expect(x.axisLabel.formatter(2)).toBe('2');
    // the points sit at their cycle numbers (the fixture's months are 0, 0.07, 0.13, 0.2)
    const lineA = seriesOf(ft.option).find((s) => s.type === 'line' && s.name === 'A: 4 % emulsifier')!;
    expect((lineA.data as unknown[][]).map((d) => [d[0], d[2]])).toEqual([
      [0, 'Initial'],
      [1, 'Cycle 1'],
      [2, 'Cycle 2'],
      [3, 'Cycle 3'],
    ]);
    // a constant condition keeps months
    const room = measuredChart(a, ph, 'condition', 'x').panels[1];
    expect((room.option.xAxis as { name: string }).name).toBe('Months');
    expect(stringsIn(measuredChart(a, ph, 'condition', 'x').panels.map((p) => p.option)).join(' ')).not.toMatch(/Day 0/);
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
    console.info(`10 000-point chart built in ${ms.toFixed(0)} ms (speed goals: npm run bench)`);
  });

  it('rounds axis ranges to 1, 2 or 5 steps', () => {
    expect(niceRange(4.77, 6)).toEqual({ min: 4.5, max: 6, step: 0.5 });
    expect(niceRange(0, 11.04, 6)).toEqual({ min: 0, max: 12, step: 2 });
    expect(niceRange(5, 5)).toEqual({ min: 4.7, max: 5.3, step: 0.1 });
    expect(niceRange(NaN, 1)).toBeNull();
  });
});

describe('variant styles, limits and legends', () => {
  /** WCAG 2.1 relative luminance and contrast ratio (W3C, Web Content Accessibility Guidelines 2.1, definitions). */
  const contrastOnWhite = (hex: string) => {
    const lin = (c: number) => (c <= 0.03928 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
    const [r, g, b] = [1, 3, 5].map((i) => lin(parseInt(hex.slice(i, i + 2), 16) / 255));
    return 1.05 / (0.2126 * r + 0.7152 * g + 0.0722 * b + 0.05);
  };

  it('gives each variant a color at 3:1 or more on white and a marker of its own, the same on every chart', () => {
    // WCAG 2.1 SC 1.4.11 asks 3:1 for graphics; Okabe-Ito blue (#0072B2) is 5.2:1 by the same formula
    expect(contrastOnWhite('#0072B2')).toBeCloseTo(5.19, 2);
    for (const c of VARIANT_COLORS) expect(contrastOnWhite(c), c).toBeGreaterThanOrEqual(3);
    expect(new Set(VARIANT_COLORS).size).toBe(VARIANT_COLORS.length);
    expect(new Set(VARIANT_MARKERS).size).toBe(VARIANT_MARKERS.length);
    const a = fixture();
    const ph = a.attributes[0];
    const styleOf = (o: ChartOption, name: string) => {
      const x = seriesOf(o).find((s) => s.type === 'line' && s.name === name) as AnySeries & { color: string };
      return [x.color, x.symbol];
    };
    const B = [VARIANT_COLORS[1], variantStyle(1).symbol];
    // by condition, by variant (every condition line of B's panel), in the ΔE chart, and alone in a comparison
    for (const p of measuredChart(a, ph, 'condition', 'x').panels) expect(styleOf(p.option, 'B: 5 % emulsifier + xanthan')).toEqual(B);
    const bPanel = measuredChart(a, ph, 'variant', 'x').panels[1];
    for (const c of ['4 °C control', '25 °C / 60 % RH', '45 °C']) expect(styleOf(bPanel.option, c)).toEqual(B);
    expect(bPanel.variantIndex).toBe(1);
    expect(styleOf(deltaEChart(a, 'de00', 'condition', 'x').option, 'A · 45 °C')).toEqual([VARIANT_COLORS[0], variantStyle(0).symbol]);
    const alone = measuredChart(a, ph, 'condition', 'x', { variantIds: [2] }).panels[2];
    expect(styleOf(alone.option, 'B: 5 % emulsifier + xanthan')).toEqual(B);
    expect(seriesOf(alone.option).some((s) => s.name?.startsWith('A:'))).toBe(false);
  });

  it('draws one limit line per distinct value, labelled once, at the precision the engine used', () => {
    const a = fixture();
    // B's limits come from its own initial mean: 5.485 ± 0.5, i.e. 4.985 to 5.985 (not 4.99)
    a.limits[1] = { ...a.limits[1], limit: { lower: 4.985, upper: 5.985, decimals: 2 }, basis: 'initial mean 5.485 ± 0.5: 4.985 to 5.985' };
    const hot = measuredChart(a, a.attributes[0], 'condition', 'x').panels[2];
    const limits = seriesOf(hot.option).find((x) => x.name === SERIES_NAMES.limits)!;
    expect(limits.markArea).toBeUndefined();
    const names = limits.markLine!.data.map((d) => (d as { name: string }).name);
    expect(names).toEqual(['A lower limit 5.00', 'B lower limit 4.985', 'A upper limit 6.00', 'B upper limit 5.985']);
    // a limit of A's alone is drawn in A's color
    expect((limits.markLine!.data[0] as { lineStyle: { color: string } }).lineStyle.color).toBe(VARIANT_COLORS[0]);
    // B alone in its own panel: its lines, no code needed
    const bOnly = measuredChart(a, a.attributes[0], 'variant', 'x').panels[1];
    const bl = seriesOf(bOnly.option).find((x) => x.name === SERIES_NAMES.limits)!;
    expect(bl.markLine!.data.map((d) => (d as { name: string }).name)).toEqual(['lower limit 4.985', 'upper limit 5.985']);
    // equal to the last digit (5 and 5.000000000001 from a mean): still one line
    a.limits[1] = { ...a.limits[1], limit: { lower: 5.000000000001, upper: 6, decimals: 2 } };
    const one = seriesOf(measuredChart(a, a.attributes[0], 'condition', 'x').panels[2].option).find((x) => x.name === SERIES_NAMES.limits)!;
    expect(one.markLine!.data).toHaveLength(2);
  });

  it('writes limits as the engine uses them and ticks at their step', () => {
    // the engine's own wording (shared/compute/shelf-life.ts limitValueText) for every computed limit
    for (const x of [4.985, 5.485 - 0.5, 0.1 + 0.2, 95, 6.0275, -1.25]) expect(limitShown(x, 2).replace('−', '-')).toBe(Number(x.toFixed(2)) === x ? x.toFixed(2) : limitValueText(x));
    expect(limitShown(4.985, 2)).toBe('4.985');
    expect(limitShown(5, 2)).toBe('5.00');
    expect(limitShown(95, 1)).toBe('95.0');
    // ticks: decimals from the step, never binary noise (the PDF's axis once read 5.016666666666667)
    expect(niceRange(5.016666666666667, 6.02)).toEqual({ min: 5, max: 6.5, step: 0.5 });
    expect([0.5, 0.2, 0.05, 1, 2000].map(stepDecimals)).toEqual([1, 1, 2, 0, 0]);
    expect(tickText(5.2, 0.2)).toBe('5.2');
    expect(tickText(0.30000000000000004, 0.1)).toBe('0.3');
    expect(tickText(28000, 2000)).toBe('28,000');
    expect(tickText(-0.2, 0.1)).toBe('−0.2');
    expect([cycleOf('Cycle 3'), cycleOf('Initial'), cycleOf('Week 2', 0.46)]).toEqual([3, 0, null]);
  });

  it('writes whole variant names in the legend, wrapping long ones, the full name on hover', () => {
    const a = fixture();
    a.variants[1].name = '5 % emulsifier + 0.3 % xanthan gum, pre-hydrated in glycerin';
    const p = measuredChart(a, a.attributes[0], 'condition', 'x').panels[2];
    const legend = p.option.legend as { data: { name: string; textStyle?: { width: number; overflow: string } }[]; type: string; tooltip: { show: boolean; formatter: (x: unknown) => string } };
    const long = legend.data.find((d) => d.name === 'B: 5 % emulsifier + 0.3 % xanthan gum, pre-hydrated in glycerin')!;
    expect(long.textStyle).toMatchObject({ width: LEGEND_TEXT_WIDTH, overflow: 'break' });
    // short names keep their own width
    expect(legend.data.find((d) => d.name === 'A: 4 % emulsifier')!.textStyle).toBeUndefined();
    expect(legend.type).toBe('plain');
    expect(legend.tooltip.show).toBe(true);
    expect(legend.tooltip.formatter({ name: 'B: <x>' })).toBe('B: &lt;x&gt;');
    // the chart grows for a wrapped name instead of hiding legend entries behind arrows
    expect(legendLayout(['A: short', 'B: 5 % emulsifier + 0.3 % xanthan gum, pre-hydrated in glycerin'], 480).height).toBeGreaterThan(22);
    expect(p.height).toBeGreaterThan(270 + 22);
    expect(stringsIn(p.option).join(' ')).not.toContain('…');
  });

  it('lists batches left out, the fit-alone figure and a check-the-data warning apart from the message', () => {
    const a = fixture();
    a.regressions[0] = {
      ...a.regressions[0],
      model: 'separate',
      message: 'Separate intercepts and slopes in one model: batch L-A governs. The bound meets the lower limit 5.00 at 14.20 months. Left out: batch L-A3 (results at one time only (0 months): left out of the fit until it has results at 2 or more times; its readings stay on the chart).',
      warning: 'The results lie exactly on a straight line (no residual spread), so the confidence bound is the line itself: check the data.',
      excluded: [{ batch: 'L-A3', reason: 'results at one time only (0 months): left out of the fit until it has results at 2 or more times; its readings stay on the chart' }],
      alternative: { separateFit: 'each_alone', months: 16.1, status: 'crossed', governingBatch: 'L-A', message: 'Each batch fitted alone (own residual SD, n - 2 df): 16.10 months, batch L-A governs.' },
    };
    const f = measuredChart(a, a.attributes[0], 'condition', 'x').panels[1].fits[0];
    expect(f.message).toBe('Separate intercepts and slopes in one model: batch L-A governs. The bound meets the lower limit 5.00 at 14.20 months.');
    expect(f.excluded).toEqual(['Batch L-A3 left out: results at one time only (0 months): left out of the fit until it has results at 2 or more times; its readings stay on the chart.']);
    expect(f.alternative).toMatch(/^Each batch fitted alone .*16\.10 months/);
    expect(f.warning).toMatch(/check the data\.$/);
    // the same notes beside the reasons table, cut out of the reason's message (shared/compute/suggest.ts joins them)
    const notes = regressionNotes(a, 1);
    expect(notes).toHaveLength(1);
    const reason = { attribute: 'pH', condition: '25 °C / 60 % RH', method: 'regression' as const, message: [a.regressions[0].message, a.regressions[0].warning, `Beside it: ${a.regressions[0].alternative!.message}`].join(' ') };
    const split = reasonWithNotes(reason, notes);
    expect(split.message).toBe(f.message);
    expect(split.note!.excluded[0].batch).toBe('L-A3');
    expect(reasonWithNotes({ ...reason, method: 'q10' }, notes).note).toBeNull();
    expect(fitNote({ message: 'x', excluded: [], alternative: null }, 'A', '#000').warning).toBeNull();
  });
});

describe('heat grids of graded and compared attributes', () => {
  const a = fixture();

  it('puts each sample in a row and each checkpoint in a column, with the grade in every cell and ✕ on failures', () => {
    const g = heatGrid(a, a.attributes[1], 'condition', 'keepwell-study-7-separation');
    // the initial test once (2 variants x 2 samples), then 3 constant conditions x 2 variants x 2 samples; freeze-thaw apart
    expect(g.parts.map((p) => [p.key, p.rows])).toEqual([
      ['time', 4 + 12],
      ['cycles', 4],
    ]);
    expect(g.rows).toBe(20);
    const [time, cycles] = g.parts;
    // cycles and weeks never share a column order
    expect(time.columns).toEqual(['Initial', 'Week 1', 'Week 2', 'Week 4', 'Week 8', 'Week 12']);
    expect(cycles.columns).toEqual(['Cycle 1', 'Cycle 2', 'Cycle 3']);
    expect(cycles.title).toMatch(/^Freeze-thaw cycles/);
    const y = time.option.yAxis as { data: string[]; axisLabel: { formatter: (v: string, i: number) => string } };
    expect(y.data[0]).toBe('Initial test · A · A0-1');
    expect(y.data[4]).toBe('4 °C control · A · A11-1');
    // each row led by its variant's marker (A a circle, B a square)
    expect(y.axisLabel.formatter(y.data[0], 0)).toBe('{m0|●} Initial test · A · A0-1');
    expect(y.axisLabel.formatter(y.data[2], 2)).toBe('{m1|■} Initial test · B · B0-1');
    const cells = (seriesOf(time.option)[0].data as { value: unknown[] }[]).map((d) => d.value);
    const failing = cells.filter((v) => String(v[3]).includes('✕'));
    // B at 45 °C, weeks 8 and 12, two samples each
    expect(failing).toHaveLength(4);
    expect(failing[0][3]).toBe('3 ✕');
    expect(failing[0][4]).toBe('3 Visible layer');
    expect(g.failing).toHaveLength(4);
    // the initial test's readings are one cell each, not one per condition (4 samples), and one CSV row each
    expect(cells.filter((v) => v[0] === 0)).toHaveLength(4);
    expect(g.csv.rows.filter((r) => r[5] === 'Initial')).toHaveLength(4);
    // the legend says what each grade means, in our palette, above the first grid only
    const vm = time.option.visualMap as { pieces: { value: number; label: string; color: string }[]; show: boolean };
    expect(vm.pieces.map((p) => p.label)).toEqual(['0 None', '1 Faint oil sheen', '2 Oil droplets on surface', '3 Visible layer', '4 Fully split']);
    expect(vm.pieces.map((p) => p.color)).toEqual(HEAT_PALETTE);
    expect(vm.show).toBe(true);
    expect((cycles.option.visualMap as { show: boolean }).show).toBe(false);
    expect(time.height).toBeGreaterThan(16 * 26);
  });

  it('writes comparisons with the control in words, and spreads 4 levels over the palette', () => {
    const g = heatGrid(a, a.attributes[2], 'variant', 'x');
    const vm = g.parts[0].option.visualMap as { pieces: { label: string }[] };
    expect(vm.pieces.map((p) => p.label)).toEqual(['no change vs control', 'slight vs control', 'marked vs control', 'severe vs control']);
    const cells = (seriesOf(g.parts[0].option)[0].data as { value: unknown[] }[]).map((d) => d.value[3]);
    expect(cells).toContain('marked ✕');
    expect(cells).toContain('slight');
    expect(heatSteps([{ value: 0, label: 'Pass' }, { value: 1, label: 'Fail' }]).map((s) => s.color)).toEqual([HEAT_PALETTE[0], HEAT_PALETTE[4]]);
    // variant grouping puts the variant first in the row label
    expect((g.parts[0].option.yAxis as { data: string[] }).data[0]).toBe('A · Initial test · A0-1');
    expect((g.parts[0].option.yAxis as { data: string[] }).data[2]).toBe('A · 4 °C control · A11-1');
  });

  it('draws only the picked variants, each still in its own style (the comparison over time)', () => {
    const g = heatGrid(a, a.attributes[1], 'condition', 'x', { variantIds: [2] });
    const y = g.parts[0].option.yAxis as { data: string[]; axisLabel: { formatter: (v: string, i: number) => string } };
    expect(y.data.every((l) => l.includes(' · B · '))).toBe(true);
    expect(y.axisLabel.formatter(y.data[0], 0)).toMatch(/^\{m1\|■\}/);
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

describe('comparison at a checkpoint the user picks', () => {
  const a = fixture();

  it('lists the checkpoints in time, then the cycles apart', () => {
    expect(compareCheckpoints(a, [1, 2]).map((c) => c.label)).toEqual(['Initial', 'Week 1', 'Week 2', 'Week 4', 'Week 8', 'Week 12', 'Cycle 1', 'Cycle 2', 'Cycle 3']);
  });

  it('reads every cell as of that checkpoint: the latest result on or before it', () => {
    const week4 = compareCheckpoints(a, [1, 2]).find((c) => c.label === 'Week 4')!;
    const m = compareMatrix(a, [1, 2], week4.months);
    const hot = m.conditions[2];
    // B's pH at 45 °C at week 4: 5.5 - 0.06 x 4 = 5.26 (the mean of 5.25 and 5.27), passing; latest it fails
    expect(hot.rows[0].cells[1]).toMatchObject({ text: '5.26', state: 'pass', at: 'Week 4', firstFail: null });
    // B's separation fails from week 8: not yet at week 4
    expect(hot.rows[1].cells[1]).toMatchObject({ state: 'pass', at: 'Week 4' });
    expect(firstFailureText(hot.firstFailures[1])).toBe('None so far');
    // its readings by then: weeks 1, 2 and 4 x 2 samples x 3 attributes (the initial test is not counted)
    expect(hot.firstFailures[1]!.dataPoints).toBe(18);
    expect(compareMatrix(a, [1, 2], 0).conditions[2].firstFailures[1]!.dataPoints).toBe(0);
    // freeze-thaw was done within the first week: its latest cycle by then
    expect(m.conditions[3].rows[0].cells[0].at).toBe('Cycle 3');
    // at week 8 the first failure is there
    const week8 = compareCheckpoints(a, [1, 2]).find((c) => c.label === 'Week 8')!;
    expect(firstFailureText(compareMatrix(a, [1, 2], week8.months).conditions[2].firstFailures[1])).toBe('Week 8 (1.84 months): Separation');
    // the initial test alone
    expect(compareMatrix(a, [1, 2], 0).conditions[2].rows[0].cells[1]).toMatchObject({ at: 'Initial', state: 'pass' });
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
