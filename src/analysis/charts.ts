/**
 * Turns a study's analysis into ECharts options, CSV files and plain lists for the analysis
 * screens. Pure: no DOM, no I/O; the components only hand the options to ECharts.
 *
 * - Measured attributes: value against months, one panel per condition (lines per variant or
 *   batch) or per variant (lines per condition), acceptance limits as a band or lines, day-0
 *   values and failing results with their own symbols, and where ICH Q1E regression was fitted
 *   the mean line with its one-sided confidence bound (shared/compute/regression.ts).
 * - Graded, compared and pass/fail attributes: a sample x checkpoint heat grid with our palette,
 *   the grade or level written in each cell and a legend that says what each step means.
 * - Color difference from day 0 (ΔE00 or ΔE*ab) per variant and condition.
 * Above LARGE_POINTS readings a chart drops symbols and animation and samples its lines (LTTB).
 */
import type { HeatmapSeriesOption, LineSeriesOption, ScatterSeriesOption } from 'echarts/charts';
import type {
  DataZoomComponentOption,
  GridComponentOption,
  LegendComponentOption,
  MarkAreaComponentOption,
  MarkLineComponentOption,
  ToolboxComponentOption,
  TooltipComponentOption,
  VisualMapComponentOption,
} from 'echarts/components';
import type { ComposeOption } from 'echarts/core';
import { confidenceBoundOfMean } from '@shared/compute/regression';
import type { AcceptanceLimit, ChartLine } from '@shared/compute/shelf-life';
import type { CsvFile } from './csv';
import { DASH, isNum, levelsOf, levelValue, mktText, num, conditionFacts, slug, valueWords, VERDICT_WORDS } from './format';
import type { AnalysisAttribute, AnalysisCondition, AnalysisVariant, Regression, Series, SeriesPoint, StudyAnalysis } from './types';

export type ChartOption = ComposeOption<
  | LineSeriesOption
  | ScatterSeriesOption
  | HeatmapSeriesOption
  | GridComponentOption
  | TooltipComponentOption
  | LegendComponentOption
  | MarkAreaComponentOption
  | MarkLineComponentOption
  | DataZoomComponentOption
  | ToolboxComponentOption
  | VisualMapComponentOption
>;

/** Above this many readings a chart is drawn without symbols or animation, its lines sampled. */
export const LARGE_POINTS = 1000;

export type Grouping = 'condition' | 'variant';

/** Our own series colors: distinct in hue and lightness, each at least 4.5:1 on white. */
export const SERIES_COLORS = ['#1d6a66', '#a65d16', '#6b4c9a', '#2f63a3', '#a23b3b', '#4f6f1f', '#7a5a3a', '#3d5560'];
/** Line styles that tell lines of one color apart (never color alone). */
const DASHES: LineDashStyle[] = ['solid', 'dashed', 'dotted', [10, 3, 2, 3]];
const LINE_SYMBOLS = ['emptyCircle', 'emptyRect', 'emptyTriangle', 'emptyDiamond'];
type LineDashStyle = 'solid' | 'dashed' | 'dotted' | number[];

export const INK = '#1f2328';
export const BAD = '#b42318';
const GRID_LINE = '#e4e7eb';
const AXIS_TEXT = '#4b5563';
/** A filled "x" for failing results (a shape of its own, not just a color). */
export const FAIL_SYMBOL = 'path://M2,0 L5,3 L8,0 L10,2 L7,5 L10,8 L8,10 L5,7 L2,10 L0,8 L3,5 L0,2 Z';
export const DAY0_SYMBOL = 'diamond';

export const SERIES_NAMES = {
  fail: 'Fails criterion',
  day0: 'Day 0',
  limits: 'Acceptance limits',
  fit: 'Fitted mean',
  bound: 'Confidence bound',
} as const;

/** HTML-escapes text for tooltips (names come from lab data). */
export function esc(s: unknown): string {
  return String(s ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

/** Round min/max outwards to a step of 1, 2 or 5 x 10^k, about `ticks` steps in all. */
export function niceRange(min: number, max: number, ticks = 5): { min: number; max: number; step: number } | null {
  if (!isNum(min) || !isNum(max)) return null;
  if (min > max) [min, max] = [max, min];
  if (max - min < 1e-12) {
    const pad = Math.abs(min) > 1e-9 ? Math.abs(min) * 0.05 : 1;
    min -= pad;
    max += pad;
  }
  const raw = (max - min) / Math.max(1, ticks);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const f = raw / mag;
  const step = (f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10) * mag;
  const lo = Math.floor(min / step + 1e-9) * step;
  const hi = Math.ceil(max / step - 1e-9) * step;
  const clean = (x: number) => Number(x.toPrecision(12));
  return { min: clean(lo), max: clean(hi), step: clean(step) };
}

// ------------------------------------------------------------------------------------------ lines

/** One plotted line: the results of one batch (or variant) at one condition. */
interface LineSpec {
  key: string;
  name: string;
  color: string;
  dash: LineDashStyle;
  symbol: string;
  variant: AnalysisVariant;
  condition: AnalysisCondition;
  series: Series[];
  lot: string | null;
}

interface Checkpoint {
  checkpointId: number;
  label: string;
  months: number;
  values: number[];
  points: { p: SeriesPoint; s: Series }[];
}

/** Results of one line grouped by checkpoint, in time order. */
function checkpointsOf(line: LineSpec): Checkpoint[] {
  const byId = new Map<number, Checkpoint>();
  for (const s of line.series) {
    for (const p of s.points) {
      let c = byId.get(p.checkpointId);
      if (!c) {
        c = { checkpointId: p.checkpointId, label: p.label, months: p.months, values: [], points: [] };
        byId.set(p.checkpointId, c);
      }
      c.points.push({ p, s });
      if (isNum(p.value)) c.values.push(p.value);
    }
  }
  return [...byId.values()].filter((c) => isNum(c.months)).sort((x, y) => x.months - y.months);
}

const mean = (xs: number[]) => (xs.length ? xs.reduce((s, x) => s + x, 0) / xs.length : null);

/** A failing reading, listed beside the chart (a chart alone is not enough). */
export interface FailingResult {
  sampleCode: string;
  variant: string;
  lot: string;
  condition: string;
  label: string;
  months: number;
  /** False for cycles, centrifuge runs and light exposures, where months say little. */
  inMonths: boolean;
  value: string;
}

export interface LinePanel {
  key: string;
  title: string;
  facts: string;
  /** MKT of the condition (condition grouping only). */
  mkt: string | null;
  option: ChartOption;
  csv: CsvFile;
  /** Readings drawn. */
  points: number;
  large: boolean;
  empty: boolean;
  /** What each fitted line says (ICH Q1E), one sentence each. */
  fits: string[];
  /** Pixel height the chart needs (more legend rows, a zoom slider). */
  height: number;
}

export interface MeasuredChart {
  attribute: AnalysisAttribute;
  panels: LinePanel[];
  failing: FailingResult[];
  /** Conditions left out of this grouping, and why. */
  note: string | null;
}

const conditionOrder = (a: StudyAnalysis) =>
  [...a.conditions].sort((x, y) => {
    const k = (c: AnalysisCondition) => (c.kind === 'constant' ? 0 : 1);
    return k(x) - k(y) || (x.setpointC ?? 0) - (y.setpointC ?? 0) || x.id - y.id;
  });

function shortVariant(v: AnalysisVariant): string {
  const name = v.name && v.name !== v.code ? `: ${v.name}` : '';
  const s = `${v.code}${name}`;
  return s.length > 32 ? `${s.slice(0, 31)}…` : s;
}

/** Lines of one panel. */
function linesFor(a: StudyAnalysis, attrId: number, grouping: Grouping, panel: AnalysisVariant | AnalysisCondition): LineSpec[] {
  const conds = conditionOrder(a).filter((c) => c.kind === 'constant');
  const out: LineSpec[] = [];
  const of = (variantId: number, conditionId: number) =>
    a.series.filter((s) => s.studyAttributeId === attrId && s.variantId === variantId && s.studyConditionId === conditionId);
  if (grouping === 'condition') {
    const c = panel as AnalysisCondition;
    a.variants.forEach((v, vi) => {
      const color = SERIES_COLORS[vi % SERIES_COLORS.length];
      const ss = of(v.id, c.id);
      if (!ss.some((s) => s.points.length)) return;
      const lots = [...new Set(ss.map((s) => s.lotCode))];
      if (lots.length <= 1) {
        out.push({ key: `v${v.id}c${c.id}`, name: shortVariant(v), color, dash: 'solid', symbol: LINE_SYMBOLS[0], variant: v, condition: c, series: ss, lot: lots[0] ?? null });
      } else {
        lots.forEach((lot, li) =>
          out.push({
            key: `v${v.id}c${c.id}l${li}`,
            name: `${v.code} · lot ${lot}`,
            color,
            dash: DASHES[li % DASHES.length],
            symbol: LINE_SYMBOLS[li % LINE_SYMBOLS.length],
            variant: v,
            condition: c,
            series: ss.filter((s) => s.lotCode === lot),
            lot,
          }),
        );
      }
    });
  } else {
    const v = panel as AnalysisVariant;
    conds.forEach((c, ci) => {
      const color = SERIES_COLORS[ci % SERIES_COLORS.length];
      const ss = of(v.id, c.id);
      if (!ss.some((s) => s.points.length)) return;
      const lots = [...new Set(ss.map((s) => s.lotCode))];
      if (lots.length <= 1) {
        out.push({ key: `v${v.id}c${c.id}`, name: c.name, color, dash: DASHES[ci % DASHES.length], symbol: LINE_SYMBOLS[ci % LINE_SYMBOLS.length], variant: v, condition: c, series: ss, lot: lots[0] ?? null });
      } else {
        lots.forEach((lot, li) =>
          out.push({
            key: `v${v.id}c${c.id}l${li}`,
            name: `${c.name} · lot ${lot}`,
            color,
            dash: DASHES[li % DASHES.length],
            symbol: LINE_SYMBOLS[li % LINE_SYMBOLS.length],
            variant: v,
            condition: c,
            series: ss.filter((s) => s.lotCode === lot),
            lot,
          }),
        );
      }
    });
  }
  return out;
}

/** Points of a fitted mean line and its confidence bound(s), from 0 to `tEnd` months. */
export function fitCurves(line: ChartLine, limit: AcceptanceLimit, levelPerSide: number | null, tEnd: number, steps = 48) {
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

/** How far a fit is drawn: to the crossing (a little past), else half as far again as the data. */
export function fitEnd(r: Pick<Regression, 'status' | 'months'>, line: Pick<ChartLine, 'tMax'>): number {
  const tMax = isNum(line.tMax) && line.tMax > 0 ? line.tMax : 1;
  const target = r.status === 'crossed' && isNum(r.months) ? Math.max(tMax, r.months * 1.08) : tMax * 1.5;
  return Math.min(60, Math.max(tMax, target));
}

function sameLimit(x: AcceptanceLimit, y: AcceptanceLimit): boolean {
  const eq = (p?: number | null, q?: number | null) => (p == null && q == null) || (isNum(p) && isNum(q) && Math.abs(p - q) < 1e-9);
  return eq(x.lower, y.lower) && eq(x.upper, y.upper);
}

function limitPhrase(l: AcceptanceLimit, decimals: number): string {
  if (isNum(l.lower) && isNum(l.upper)) return `${num(l.lower, decimals)}–${num(l.upper, decimals)}`;
  if (isNum(l.lower)) return `at least ${num(l.lower, decimals)}`;
  if (isNum(l.upper)) return `at most ${num(l.upper, decimals)}`;
  return 'no numeric limit';
}

const baseTooltip = (): TooltipComponentOption => ({
  trigger: 'item',
  confine: true,
  backgroundColor: '#ffffff',
  borderColor: GRID_LINE,
  textStyle: { color: INK, fontSize: 12 },
});

const toolbox = (fileBase: string): ToolboxComponentOption => ({
  right: 4,
  top: 0,
  itemSize: 16,
  feature: { saveAsImage: { title: 'Save as PNG', name: fileBase, type: 'png', pixelRatio: 2, backgroundColor: '#ffffff' } },
});

/** Every chart of one measured attribute, for the chosen grouping. */
export function measuredChart(a: StudyAnalysis, attr: AnalysisAttribute, grouping: Grouping, fileBase: string): MeasuredChart {
  const unit = attr.unit ?? '';
  const dec = isNum(attr.decimals) ? attr.decimals : 2;
  const conds = conditionOrder(a);
  const panelsOf: (AnalysisVariant | AnalysisCondition)[] = grouping === 'condition' ? conds : a.variants;
  const left = grouping === 'variant' ? conds.filter((c) => c.kind !== 'constant') : [];
  const note = left.length
    ? `${left.map((c) => c.name).join(', ')}: counted in cycles or runs, not months, so shown when grouped by condition.`
    : null;

  // ---- gather lines and fits of every panel first, so all panels share one y range and one month range
  type Built = { panel: AnalysisVariant | AnalysisCondition; lines: LineSpec[]; cps: Map<string, Checkpoint[]>; regs: { r: Regression; l: ChartLine; spec: LineSpec | null; end: number }[] };
  const built: Built[] = panelsOf.map((panel) => {
    const lines = linesFor(a, attr.id, grouping, panel);
    const cps = new Map(lines.map((l) => [l.key, checkpointsOf(l)]));
    const regs: Built['regs'] = [];
    for (const r of a.regressions.filter((x) => x.studyAttributeId === attr.id)) {
      const mine = lines.filter((l) => l.variant.id === r.variantId && l.condition.id === r.studyConditionId);
      if (!mine.length) continue;
      for (const l of r.lines ?? []) {
        const spec = l.batch == null ? mine[0] : (mine.find((m) => m.lot === l.batch) ?? mine[0]);
        regs.push({ r, l, spec, end: fitEnd(r, l) });
      }
    }
    return { panel, lines, cps, regs };
  });

  // one y range for every panel (so panels compare at a glance); each panel its own month range
  const ys: number[] = [];
  const xMaxOf = new Map<Built, number>();
  for (const b of built) {
    let xMax = 0;
    for (const cps of b.cps.values()) for (const c of cps) {
      for (const v of c.values) ys.push(v);
      xMax = Math.max(xMax, c.months);
    }
    for (const g of b.regs) {
      const curves = fitCurves(g.l, g.r.limit, g.r.levelPerSide, g.end, 12);
      for (const arr of [curves.fit, curves.lower, curves.upper]) for (const [, y] of arr) ys.push(y);
      xMax = Math.max(xMax, g.end);
    }
    xMaxOf.set(b, xMax);
  }
  const variantIds = new Set(a.variants.map((v) => v.id));
  const attrLimits = a.limits.filter((l) => l.studyAttributeId === attr.id && variantIds.has(l.variantId));
  for (const l of attrLimits) for (const y of [l.limit.lower, l.limit.upper]) if (isNum(y)) ys.push(y);
  const yr = ys.length ? niceRange(ys.reduce((m, y) => Math.min(m, y), Infinity), ys.reduce((m, y) => Math.max(m, y), -Infinity)) : null;

  const failing: FailingResult[] = [];
  const panels: LinePanel[] = built.map((b) => {
    const { panel, lines, cps, regs } = b;
    const xr = niceRange(0, Math.max(xMaxOf.get(b) ?? 0, 0.5), 6);
    const isCond = grouping === 'condition';
    const cond = isCond ? (panel as AnalysisCondition) : null;
    const byCheckpoints = cond !== null && cond.kind !== 'constant';
    const title = isCond ? (panel as AnalysisCondition).name : shortVariant(panel as AnalysisVariant);
    const facts = cond ? conditionFacts(cond) : `Lots ${(panel as AnalysisVariant).lots.join(', ') || DASH}`;
    const readings = [...cps.values()].reduce((s, list) => s + list.reduce((t, c) => t + c.values.length, 0), 0);
    const large = readings > LARGE_POINTS;
    // checkpoint labels on the x axis for cycles, runs and light exposures
    const categories = byCheckpoints
      ? [...new Map([...cps.values()].flat().sort((x, y) => x.months - y.months).map((c) => [c.label, c.label])).keys()]
      : [];
    const xOf = (c: { months: number; label: string }) => (byCheckpoints ? categories.indexOf(c.label) : c.months);

    const series: (LineSeriesOption | ScatterSeriesOption)[] = [];
    const fails: (string | number)[][] = [];
    const day0: (string | number)[][] = [];
    const csvRows: CsvFile['rows'] = [];
    for (const l of lines) {
      const list = cps.get(l.key) ?? [];
      const data = list
        .map((c) => ({ c, m: mean(c.values) }))
        .filter((x): x is { c: Checkpoint; m: number } => x.m !== null)
        .map(({ c, m }) => [xOf(c), m, c.label, c.values.length === 1 ? '1 reading' : `mean of ${c.values.length} readings`]);
      series.push({
        type: 'line',
        name: l.name,
        data,
        color: l.color,
        lineStyle: { width: 2, type: l.dash as 'solid' },
        symbol: l.symbol,
        symbolSize: 7,
        showSymbol: !large,
        sampling: large ? 'lttb' : undefined,
        emphasis: { focus: 'series' },
        z: 3,
      });
      const replicates = list.some((c) => c.values.length > 1);
      if (replicates) {
        series.push({
          type: 'scatter',
          name: l.name,
          data: list.flatMap((c) => c.points.filter((x) => isNum(x.p.value)).map((x) => [xOf(c), x.p.value as number, c.label, `sample ${x.p.sampleCode}`])),
          color: l.color,
          symbol: 'circle',
          symbolSize: large ? 2 : 5,
          itemStyle: { opacity: 0.45 },
          large,
          silent: large,
          z: 2,
        });
      }
      const zero = list.find((c) => Math.abs(c.months) < 1e-9 || c.label.toLowerCase() === 'day 0');
      const zm = zero ? mean(zero.values) : null;
      if (zero && zm !== null) day0.push([xOf(zero), zm, zero.label, `${l.name}: day-0 ${zero.values.length > 1 ? `mean of ${zero.values.length}` : 'value'}`]);
      for (const c of list) {
        for (const { p, s } of c.points) {
          const lim = attrLimits.find((x) => x.variantId === s.variantId)?.limit;
          csvRows.push([attr.name, unit, l.variant.code, s.lotCode, l.condition.name, p.label, isNum(p.months) ? Number(p.months.toFixed(4)) : null, p.dueDate, p.sampleCode, isNum(p.value) ? p.value : null, VERDICT_WORDS[p.verdict] ?? p.verdict, lim?.lower ?? null, lim?.upper ?? null]);
          if (p.verdict === 'fail') {
            if (isNum(p.value)) fails.push([xOf(c), p.value, c.label, `sample ${p.sampleCode} · ${l.name}`]);
            failing.push({ sampleCode: p.sampleCode, variant: l.variant.code, lot: s.lotCode, condition: l.condition.name, label: p.label, months: p.months, inMonths: l.condition.kind === 'constant', value: valueWords(attr, p.value) });
          }
        }
      }
    }

    // ---- fits (months axis only)
    const fits: string[] = [];
    if (!byCheckpoints) {
      for (const g of regs) {
        const color = g.spec?.color ?? INK;
        const c = fitCurves(g.l, g.r.limit, g.r.levelPerSide, g.end);
        const who = g.spec ? (g.l.batch && g.spec.lot !== g.l.batch ? `${g.spec.name} (lot ${g.l.batch})` : g.spec.name) : 'Fit';
        series.push({ type: 'line', name: SERIES_NAMES.fit, data: c.fit.map(([t, y]) => [t, y, '', `${who}: fitted mean`]), color, symbol: 'none', lineStyle: { width: 1.5, type: 'dashed', opacity: 0.9 }, silent: false, z: 1 });
        const pct = isNum(g.r.levelPerSide) ? `${num(g.r.levelPerSide * 100, 1)} % one-sided` : '';
        const crossing = g.r.status === 'crossed' && isNum(g.r.months) && g.r.months <= g.end ? g.r.months : null;
        let marked = false;
        for (const side of [c.lower, c.upper]) {
          if (!side.length) continue;
          const mark: boolean = crossing !== null && !marked;
          marked ||= mark;
          series.push({
            type: 'line',
            name: SERIES_NAMES.bound,
            data: side.map(([t, y]) => [t, y, '', `${who}: ${pct} bound`]),
            color,
            symbol: 'none',
            lineStyle: { width: 1.5, type: 'dotted' },
            z: 1,
            // where the bound meets the limit: the shelf life this fit supports
            markLine: mark
              ? {
                  silent: true,
                  symbol: 'none',
                  lineStyle: { color, type: 'solid', width: 1 },
                  label: { formatter: `${num(crossing, 1)} mo`, color: INK, fontSize: 11, position: 'end' },
                  data: [{ xAxis: crossing as number }],
                }
              : undefined,
          });
        }
        fits.push(`${who}: ${g.r.message}`);
      }
    }

    // ---- acceptance limits: one band when every line shares it, else a pair of lines per variant
    const panelVariants = [...new Set(lines.map((l) => l.variant.id))];
    const lims = attrLimits.filter((l) => panelVariants.includes(l.variantId));
    const markLines: NonNullable<MarkLineComponentOption['data']> = [];
    let markArea: MarkAreaComponentOption | undefined;
    if (lims.length && lims.every((l) => sameLimit(l.limit, lims[0].limit))) {
      const L = lims[0].limit;
      const lo = isNum(L.lower) ? L.lower : (yr?.min ?? 0);
      const hi = isNum(L.upper) ? L.upper : (yr?.max ?? 0);
      markArea = { silent: true, itemStyle: { color: 'rgba(29,106,102,0.07)' }, label: { show: false }, data: [[{ yAxis: lo }, { yAxis: hi }]] };
      if (isNum(L.lower)) markLines.push({ yAxis: L.lower, name: `lower limit ${num(L.lower, dec)}`, lineStyle: { color: '#5b6b73', type: 'dashed' } });
      if (isNum(L.upper)) markLines.push({ yAxis: L.upper, name: `upper limit ${num(L.upper, dec)}`, lineStyle: { color: '#5b6b73', type: 'dashed' } });
    } else {
      // labels spread along the line so that close limits of different variants stay readable; none at
      // the right end, where the fit's crossing marker writes its months above the plot
      const spots = ['insideStartTop', 'insideMiddleTop', 'insideStartBottom', 'insideMiddleBottom'] as const;
      lims.forEach((l, i) => {
        const v = a.variants.find((x) => x.id === l.variantId);
        const color = grouping === 'condition' ? (lines.find((x) => x.variant.id === l.variantId)?.color ?? INK) : INK;
        const label = { position: spots[i % spots.length] };
        if (isNum(l.limit.lower)) markLines.push({ yAxis: l.limit.lower, name: `${v?.code ?? ''} lower ${num(l.limit.lower, dec)}`, lineStyle: { color, type: 'dashed' }, label });
        if (isNum(l.limit.upper)) markLines.push({ yAxis: l.limit.upper, name: `${v?.code ?? ''} upper ${num(l.limit.upper, dec)}`, lineStyle: { color, type: 'dashed' }, label });
      });
    }
    if (lims.length) {
      series.unshift({
        type: 'line',
        name: SERIES_NAMES.limits,
        data: [],
        color: '#5b6b73',
        lineStyle: { type: 'dashed', width: 1 },
        symbol: 'none',
        markArea,
        markLine: {
          silent: true,
          symbol: 'none',
          // at the left end, clear of the axis name: the crossing marker's "16.9 mo" sits above the plot's right part
          label: { formatter: '{b}', position: 'insideStartTop', padding: [0, 0, 0, 24], color: AXIS_TEXT, fontSize: 11 },
          data: markLines,
        },
        z: 0,
      });
    }
    if (day0.length) series.push({ type: 'scatter', name: SERIES_NAMES.day0, data: day0, symbol: DAY0_SYMBOL, symbolSize: 12, color: INK, itemStyle: { borderColor: '#ffffff', borderWidth: 1 }, z: 5 });
    if (fails.length) series.push({ type: 'scatter', name: SERIES_NAMES.fail, data: fails, symbol: FAIL_SYMBOL, symbolSize: 11, color: BAD, itemStyle: { borderColor: '#ffffff', borderWidth: 0.5 }, z: 6 });

    const unitOrName = unit || attr.name;
    // the legend wraps onto more rows rather than hiding entries behind arrows (up to 3 rows)
    const legendRows = legendRowsFor(series.map((x) => String(x.name ?? '')));
    const zoomSpace = large ? 34 : 0;
    const option: ChartOption = {
      animation: !large,
      animationDuration: 300,
      color: SERIES_COLORS,
      textStyle: { fontFamily: 'Inter, system-ui, sans-serif' },
      grid: { left: 8, right: 20, top: 36, bottom: 12 + legendRows * 22 + zoomSpace, outerBoundsMode: 'same', outerBoundsContain: 'all' },
      tooltip: { ...baseTooltip(), formatter: tooltipFor(unit, dec, byCheckpoints) },
      legend: { data: legendData(series.map((x) => String(x.name ?? ''))), type: legendRows >= 3 ? 'scroll' : 'plain', bottom: zoomSpace, left: 0, right: 0, itemWidth: 22, itemHeight: 10, itemGap: 14, textStyle: { color: AXIS_TEXT, fontSize: 12 } },
      toolbox: toolbox(`${fileBase}-${slug(title)}`),
      xAxis: byCheckpoints
        ? { type: 'category', data: categories, name: 'Checkpoint', nameLocation: 'middle', nameGap: 26, axisLabel: { color: AXIS_TEXT }, axisLine: { lineStyle: { color: '#9aa3ad' } } }
        : {
            type: 'value',
            name: 'Months',
            nameLocation: 'middle',
            nameGap: 26,
            min: 0,
            max: xr?.max ?? 1,
            axisLabel: { color: AXIS_TEXT },
            splitLine: { lineStyle: { color: GRID_LINE } },
            axisLine: { lineStyle: { color: '#9aa3ad' } },
          },
      yAxis: {
        type: 'value',
        name: unitOrName,
        nameTextStyle: { color: AXIS_TEXT, align: 'left' },
        min: yr?.min,
        max: yr?.max,
        interval: yr?.step,
        scale: true,
        axisLabel: { color: AXIS_TEXT },
        splitLine: { lineStyle: { color: GRID_LINE } },
      },
      dataZoom: large ? [{ type: 'slider', xAxisIndex: 0, bottom: 4, height: 22, filterMode: 'none' }] : undefined,
      series,
    };

    return {
      key: isNum((panel as { id: number }).id) ? `${grouping}-${(panel as { id: number }).id}` : title,
      title,
      facts,
      mkt: cond ? mktText(cond) : null,
      option,
      csv: {
        fileName: `${fileBase}-${slug(title)}.csv`,
        header: ['Attribute', 'Unit', 'Variant', 'Lot', 'Condition', 'Checkpoint', 'Months', 'Due date', 'Sample', 'Value', 'Verdict', 'Lower limit', 'Upper limit'],
        rows: csvRows,
      },
      points: readings,
      large,
      empty: readings === 0,
      fits,
      height: 270 + legendRows * 22 + zoomSpace,
    };
  });

  failing.sort((x, y) => x.months - y.months || x.condition.localeCompare(y.condition) || x.sampleCode.localeCompare(y.sampleCode));
  return { attribute: attr, panels, failing, note };
}

const LINE_ONLY: ReadonlySet<string> = new Set([SERIES_NAMES.limits, SERIES_NAMES.fit, SERIES_NAMES.bound, 'ΔE00 2 (common practice)']);

/** Legend entries in series order; reference lines show as a plain line, without a symbol. */
function legendData(names: string[]) {
  return [...new Set(names)].map((name) => (LINE_ONLY.has(name) ? { name, itemStyle: { opacity: 0 } } : { name }));
}

/** Rows a wrapping legend needs for these names in a chart about 480 px wide (at most 3). */
export function legendRowsFor(names: string[], width = 480): number {
  const w = [...new Set(names)].reduce((sum, n) => sum + 40 + n.length * 6.8, 0);
  return Math.min(3, Math.max(1, Math.ceil(w / width)));
}

type TooltipParams = { seriesName?: string; value?: unknown; color?: unknown };

function tooltipFor(unit: string, decimals: number, byCheckpoints: boolean) {
  return (raw: unknown): string => {
    const p = (Array.isArray(raw) ? raw[0] : raw) as TooltipParams;
    const v = Array.isArray(p?.value) ? (p.value as unknown[]) : [];
    const [x, y, label, detail] = v;
    const when = byCheckpoints ? esc(label) : `${label ? `${esc(label)} · ` : ''}${num(x, 2)} months`;
    const value = `${num(y, decimals)}${unit ? ` ${esc(unit)}` : ''}`;
    return `<div style="font-weight:600">${esc(p?.seriesName)}</div><div>${when}</div><div><b>${value}</b>${detail ? ` · ${esc(detail)}` : ''}</div>`;
  };
}

// ------------------------------------------------------------------------------------------ heat grid

/** One step of a heat grid's legend. */
export interface HeatStep {
  value: number;
  label: string;
  color: string;
  textColor: string;
}

export interface HeatGrid {
  attribute: AnalysisAttribute;
  option: ChartOption;
  csv: CsvFile;
  /** Pixel height the chart needs for its rows. */
  height: number;
  rows: number;
  steps: HeatStep[];
  failing: FailingResult[];
  empty: boolean;
}

/** Our heat palette, best to worst: pale petrol, straw, ochre, terracotta, deep brick. */
export const HEAT_PALETTE = ['#e3efed', '#f2e2ae', '#e6b46e', '#d67a52', '#9e2f25'];
const HEAT_TEXT = [INK, INK, INK, INK, '#ffffff'];

/** Palette steps for n levels, spread over the palette (2 levels: best and worst). */
export function heatSteps(levels: { value: number; label: string }[]): HeatStep[] {
  const n = levels.length;
  return levels.map((l, i) => {
    const k = n <= 1 ? 0 : Math.round((i * (HEAT_PALETTE.length - 1)) / (n - 1));
    return { value: l.value, label: l.label, color: HEAT_PALETTE[k], textColor: HEAT_TEXT[k] };
  });
}

/** The sample x checkpoint grid of a graded, compared or pass/fail attribute. */
export function heatGrid(a: StudyAnalysis, attr: AnalysisAttribute, grouping: Grouping, fileBase: string): HeatGrid {
  const levels = levelsOf(attr);
  const steps = heatSteps(levels.map((l) => ({ value: l.value, label: l.label })));
  const shortOf = new Map(levels.map((l) => [l.value, l.short]));
  const condIndex = new Map(conditionOrder(a).map((c, i) => [c.id, i]));
  const variantIndex = new Map(a.variants.map((v, i) => [v.id, i]));
  const series = a.series.filter((s) => s.studyAttributeId === attr.id);

  type Row = { key: string; label: string; s: Series; sampleCode: string };
  const rowMap = new Map<string, Row>();
  const cols = new Map<string, number>();
  for (const s of series) {
    const v = a.variants.find((x) => x.id === s.variantId);
    const c = a.conditions.find((x) => x.id === s.studyConditionId);
    for (const p of s.points) {
      const key = `${s.studyConditionId}:${s.batchId}:${p.sampleCode}`;
      if (!rowMap.has(key)) {
        const lot = v && v.lots.length > 1 ? ` · ${s.lotCode}` : '';
        const label =
          grouping === 'condition'
            ? `${c?.name ?? '?'} · ${v?.code ?? '?'}${lot} · ${p.sampleCode}`
            : `${v?.code ?? '?'}${lot} · ${c?.name ?? '?'} · ${p.sampleCode}`;
        rowMap.set(key, { key, label, s, sampleCode: p.sampleCode });
      }
      const m = isNum(p.months) ? p.months : 0;
      cols.set(p.label, Math.min(cols.get(p.label) ?? Infinity, m));
    }
  }
  const rank = (r: Row) => {
    const ci = condIndex.get(r.s.studyConditionId) ?? 0;
    const vi = variantIndex.get(r.s.variantId) ?? 0;
    return grouping === 'condition' ? [ci, vi] : [vi, ci];
  };
  const rows = [...rowMap.values()].sort((x, y) => {
    const [a1, a2] = rank(x);
    const [b1, b2] = rank(y);
    return a1 - b1 || a2 - b2 || x.s.lotCode.localeCompare(y.s.lotCode) || x.sampleCode.localeCompare(y.sampleCode);
  });
  const columns = [...cols.entries()].sort((x, y) => x[1] - y[1]).map(([label]) => label);
  const colIndex = new Map(columns.map((c, i) => [c, i]));
  const rowIndex = new Map(rows.map((r, i) => [r.key, i]));

  const data: HeatmapSeriesOption['data'] = [];
  const csvRows: CsvFile['rows'] = [];
  const failing: FailingResult[] = [];
  for (const s of series) {
    const v = a.variants.find((x) => x.id === s.variantId);
    const c = a.conditions.find((x) => x.id === s.studyConditionId);
    for (const p of s.points) {
      const lv = levelValue(attr.kind, p.value);
      const r = rowIndex.get(`${s.studyConditionId}:${s.batchId}:${p.sampleCode}`) as number;
      const x = colIndex.get(p.label) as number;
      const meaning = levels.find((l) => l.value === lv)?.label ?? (p.verdict === 'not_done' ? 'not done' : DASH);
      csvRows.push([attr.name, p.sampleCode, v?.code ?? '', s.lotCode, c?.name ?? '', p.label, isNum(p.months) ? Number(p.months.toFixed(4)) : null, lv, meaning, VERDICT_WORDS[p.verdict] ?? p.verdict]);
      if (p.verdict === 'fail') {
        failing.push({ sampleCode: p.sampleCode, variant: v?.code ?? '', lot: s.lotCode, condition: c?.name ?? '', label: p.label, months: p.months, inMonths: c?.kind === 'constant', value: meaning });
      }
      if (lv === null) continue;
      const step = steps.find((st) => st.value === lv);
      const fail = p.verdict === 'fail';
      data.push({
        value: [x, r, lv, `${shortOf.get(lv) ?? lv}${fail ? ' ✕' : ''}`, meaning, VERDICT_WORDS[p.verdict] ?? p.verdict],
        label: { color: step?.textColor ?? INK, fontWeight: fail ? 700 : 500 },
      });
    }
  }
  failing.sort((x, y) => x.months - y.months || x.sampleCode.localeCompare(y.sampleCode));

  const rowHeight = 26;
  const top = 64;
  const bottom = 12;
  const height = Math.max(160, top + bottom + rows.length * rowHeight);
  const maxLabel = Math.max(8, ...rows.map((r) => r.label.length));
  const option: ChartOption = {
    animation: false,
    textStyle: { fontFamily: 'Inter, system-ui, sans-serif' },
    grid: { left: Math.min(300, 16 + maxLabel * 6.6), right: 16, top, bottom, outerBoundsMode: 'none' },
    tooltip: {
      ...baseTooltip(),
      formatter: (raw: unknown) => {
        const p = raw as TooltipParams;
        const v = Array.isArray(p?.value) ? (p.value as unknown[]) : [];
        const row = rows[v[1] as number];
        return `<div style="font-weight:600">${esc(row?.label)}</div><div>${esc(columns[v[0] as number])}</div><div><b>${esc(v[4])}</b> · ${esc(v[5])}</div>`;
      },
    },
    toolbox: toolbox(fileBase),
    xAxis: { type: 'category', data: columns, position: 'top', axisLabel: { color: AXIS_TEXT, interval: 0, fontSize: 11 }, axisTick: { show: false }, axisLine: { show: false }, splitArea: { show: false } },
    yAxis: { type: 'category', data: rows.map((r) => r.label), inverse: true, axisLabel: { color: INK, fontSize: 11 }, axisTick: { show: false }, axisLine: { show: false } },
    visualMap: {
      type: 'piecewise',
      dimension: 2,
      pieces: steps.map((s) => ({ value: s.value, label: s.label, color: s.color })),
      orient: 'horizontal',
      left: 0,
      top: 0,
      selectedMode: false,
      itemWidth: 14,
      itemHeight: 14,
      textStyle: { color: INK, fontSize: 12 },
    },
    series: [
      {
        type: 'heatmap',
        data,
        label: { show: true, formatter: (p: unknown) => esc(((p as TooltipParams).value as unknown[])?.[3] ?? ''), fontSize: 11 },
        itemStyle: { borderColor: '#ffffff', borderWidth: 2, borderRadius: 3 },
        emphasis: { itemStyle: { borderColor: INK, borderWidth: 1 } },
      },
    ],
  };
  return {
    attribute: attr,
    option,
    csv: {
      fileName: `${fileBase}.csv`,
      header: ['Attribute', 'Sample', 'Variant', 'Lot', 'Condition', 'Checkpoint', 'Months', 'Level (0 = best)', 'Meaning', 'Verdict'],
      rows: csvRows,
    },
    height,
    rows: rows.length,
    steps,
    failing,
    empty: data.length === 0,
  };
}

// ------------------------------------------------------------------------------------------ ΔE

export type DeltaMetric = 'de00' | 'de76';
export const DELTA_LABELS: Readonly<Record<DeltaMetric, string>> = { de00: 'ΔE00 (CIEDE2000)', de76: 'ΔE*ab (CIE 1976)' };

export interface DeltaRow {
  variant: string;
  condition: string;
  label: string;
  months: number;
  samples: number;
  de76: number | null;
  de00: number | null;
}

export interface DeltaChart {
  option: ChartOption;
  csv: CsvFile;
  /** The latest ΔE per variant and condition. */
  latest: DeltaRow[];
  note: string | null;
  empty: boolean;
}

/** Color difference from day 0 per variant and condition (mean over samples at each checkpoint). */
export function deltaEChart(a: StudyAnalysis, metric: DeltaMetric, grouping: Grouping, fileBase: string): DeltaChart {
  const conds = conditionOrder(a);
  const constant = conds.filter((c) => c.kind === 'constant');
  const left = conds.filter((c) => c.kind !== 'constant' && a.deltaE.some((d) => d.studyConditionId === c.id));
  const series: LineSeriesOption[] = [];
  const latest: DeltaRow[] = [];
  const csvRows: CsvFile['rows'] = [];
  let count = 0;
  a.variants.forEach((v, vi) => {
    conds.forEach((c) => {
      const ds = a.deltaE.filter((d) => d.variantId === v.id && d.studyConditionId === c.id);
      if (!ds.length) return;
      const byLabel = new Map<string, { months: number; de76: number[]; de00: number[] }>();
      for (const d of ds) {
        for (const p of d.points) {
          csvRows.push([v.code, c.name, d.sampleCode, p.label, isNum(p.months) ? Number(p.months.toFixed(4)) : null, p.de76, p.de00]);
          const g = byLabel.get(p.label) ?? { months: p.months, de76: [], de00: [] };
          if (isNum(p.de76)) g.de76.push(p.de76);
          if (isNum(p.de00)) g.de00.push(p.de00);
          byLabel.set(p.label, g);
        }
      }
      const points = [...byLabel.entries()].filter(([, g]) => isNum(g.months)).sort((x, y) => x[1].months - y[1].months);
      const last = points[points.length - 1];
      if (last) latest.push({ variant: v.code, condition: c.name, label: last[0], months: last[1].months, samples: ds.length, de76: mean(last[1].de76), de00: mean(last[1].de00) });
      if (c.kind !== 'constant') return;
      const ci = constant.indexOf(c);
      const color = grouping === 'condition' ? SERIES_COLORS[vi % SERIES_COLORS.length] : SERIES_COLORS[ci % SERIES_COLORS.length];
      const dash = grouping === 'condition' ? DASHES[ci % DASHES.length] : DASHES[vi % DASHES.length];
      const data = points
        .map(([label, g]) => [g.months, mean(g[metric]), label] as const)
        .filter((d) => isNum(d[1]))
        .map((d) => [d[0], d[1] as number, d[2], `mean of ${ds.length} ${ds.length === 1 ? 'sample' : 'samples'}`]);
      count += data.length;
      series.push({
        type: 'line',
        name: grouping === 'condition' ? `${v.code} · ${c.name}` : `${c.name} · ${v.code}`,
        data,
        color,
        lineStyle: { width: 2, type: dash as 'solid' },
        symbol: LINE_SYMBOLS[(grouping === 'condition' ? ci : vi) % LINE_SYMBOLS.length],
        symbolSize: 7,
        showSymbol: count <= LARGE_POINTS,
      });
    });
  });
  const large = count > LARGE_POINTS;
  const legendRows = legendRowsFor(series.map((x) => String(x.name ?? '')), 1000);
  if (metric === 'de00' && series.length) {
    series.unshift({
      type: 'line',
      name: 'ΔE00 2 (common practice)',
      data: [],
      color: '#5b6b73',
      symbol: 'none',
      lineStyle: { type: 'dashed', width: 1 },
      markLine: {
        silent: true,
        symbol: 'none',
        lineStyle: { color: '#5b6b73', type: 'dashed' },
        label: { formatter: 'ΔE00 2', position: 'insideStartTop', color: AXIS_TEXT, fontSize: 11 },
        data: [{ yAxis: 2 }],
      },
    });
  }
  const option: ChartOption = {
    animation: !large,
    animationDuration: 300,
    textStyle: { fontFamily: 'Inter, system-ui, sans-serif' },
    grid: { left: 8, right: 20, top: 36, bottom: 12 + legendRows * 22, outerBoundsMode: 'same', outerBoundsContain: 'all' },
    tooltip: { ...baseTooltip(), formatter: tooltipFor('', 2, false) },
    legend: { data: legendData(series.map((x) => String(x.name ?? ''))), type: legendRows >= 3 ? 'scroll' : 'plain', bottom: 0, left: 0, right: 0, itemWidth: 22, itemHeight: 10, itemGap: 14, textStyle: { color: AXIS_TEXT, fontSize: 12 } },
    toolbox: toolbox(`${fileBase}-${metric}`),
    xAxis: { type: 'value', name: 'Months', nameLocation: 'middle', nameGap: 26, min: 0, axisLabel: { color: AXIS_TEXT }, splitLine: { lineStyle: { color: GRID_LINE } } },
    yAxis: { type: 'value', name: DELTA_LABELS[metric], min: 0, nameTextStyle: { color: AXIS_TEXT, align: 'left' }, axisLabel: { color: AXIS_TEXT }, splitLine: { lineStyle: { color: GRID_LINE } } },
    series,
  };
  return {
    option,
    csv: { fileName: `${fileBase}.csv`, header: ['Variant', 'Condition', 'Sample', 'Checkpoint', 'Months', 'ΔE*ab (CIE 1976)', 'ΔE00 (CIEDE2000)'], rows: csvRows },
    latest,
    note: left.length ? `${left.map((c) => c.name).join(', ')}: counted in cycles or runs, so in the table and the CSV only.` : null,
    empty: a.deltaE.length === 0,
  };
}
