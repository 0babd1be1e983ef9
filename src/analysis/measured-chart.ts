/**
 * Line charts of a measured attribute: one panel per condition (a line per variant or lot) or per
 * variant (a line per condition), each variant in its own color and marker (shared/chart-style.ts);
 * acceptance limits drawn once per distinct value; the initial test and failing results with their
 * own symbols; and where ICH Q1E regression was fitted, the fitted mean (solid, heavier) and its
 * one-sided confidence bound (dashed) in the variant's color. Freeze-thaw is drawn against cycles,
 * never months. Above LARGE_POINTS readings a chart drops symbols and animation and samples its
 * lines (LTTB). Pure: no DOM, no I/O.
 */
import type { LineSeriesOption, ScatterSeriesOption } from 'echarts/charts';
import type { MarkAreaComponentOption, MarkLineComponentOption } from 'echarts/components';
import { axisKindOf, cycleOf, DASHES, limitLines, niceRange, tickText, type AxisKind, type DashStyle } from '@shared/chart-style';
import { fitCurves, fitEnd } from '@shared/fit-curves';
import type { ChartLine } from '@shared/compute/shelf-life';
import type { CsvFile } from './csv';
import {
  AXIS_LINE,
  AXIS_TEXT,
  BAD,
  baseTooltip,
  BOUND_DASH,
  bottomLegend,
  conditionOrder,
  FAIL_SYMBOL,
  FIT_WIDTH,
  FONT,
  GRID_LINE,
  INITIAL_SYMBOL,
  INK,
  LARGE_POINTS,
  legendLayout,
  LIMIT_COLOR,
  LIMIT_DASH,
  lineType,
  mean,
  SERIES_NAMES,
  shownVariants,
  styleOfVariant,
  toolbox,
  tooltipFor,
  type ChartOption,
  type FailingResult,
  type Grouping,
} from './chart-common';
import { conditionFacts, DASH, isNum, mktText, num, slug, VARIANT_LABEL, valueWords, VERDICT_WORDS } from './format';
import type { AnalysisAttribute, AnalysisCondition, AnalysisVariant, Regression, Series, SeriesPoint, StudyAnalysis } from './types';

/** One plotted line: the results of one batch (or variant) at one condition. */
interface LineSpec {
  key: string;
  name: string;
  color: string;
  dash: DashStyle;
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

/** What one fitted line says (ICH Q1E), with the engine's notes beside it. */
export interface FitNote {
  /** Whose line ("A: 4 % emulsifier", "25 °C / 60 % RH"). */
  who: string;
  color: string;
  message: string;
  /** Something to check, e.g. results exactly on a line. */
  warning: string | null;
  /** Batches left out of the fit, with why. */
  excluded: string[];
  /** The other way of fitting separate lines, beside the figure used. */
  alternative: string | null;
}

export interface LinePanel {
  key: string;
  title: string;
  facts: string;
  /** MKT of the condition (condition grouping only). */
  mkt: string | null;
  /** The x axis: months, freeze-thaw cycles or checkpoints. */
  axis: AxisKind;
  /** The panel's variant's place in the study (its color and marker), in per-variant panels. */
  variantIndex: number | null;
  option: ChartOption;
  csv: CsvFile;
  /** Readings drawn. */
  points: number;
  large: boolean;
  empty: boolean;
  /** What each fitted line says (ICH Q1E), with its notes. */
  fits: FitNote[];
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

const AXIS_NAMES: Readonly<Record<AxisKind, string>> = { months: 'Months', cycles: 'Freeze-thaw cycles', checkpoints: 'Checkpoint' };

/** Lines of one panel. */
function linesFor(a: StudyAnalysis, attrId: number, grouping: Grouping, panel: AnalysisVariant | AnalysisCondition, variants: AnalysisVariant[]): LineSpec[] {
  const out: LineSpec[] = [];
  const of = (variantId: number, conditionId: number) =>
    a.series.filter((s) => s.studyAttributeId === attrId && s.variantId === variantId && s.studyConditionId === conditionId);
  const push = (v: AnalysisVariant, c: AnalysisCondition, base: string, dashAt: (li: number) => DashStyle) => {
    const st = styleOfVariant(a, v.id);
    const ss = of(v.id, c.id);
    if (!ss.some((s) => s.points.length)) return;
    const lots = [...new Set(ss.map((s) => s.lotCode))];
    lots.forEach((lot, li) =>
      out.push({
        key: lots.length > 1 ? `v${v.id}c${c.id}l${li}` : `v${v.id}c${c.id}`,
        name: lots.length > 1 ? `${base} · lot ${lot}` : base,
        color: st.color,
        dash: dashAt(li),
        symbol: st.symbol,
        variant: v,
        condition: c,
        series: lots.length > 1 ? ss.filter((s) => s.lotCode === lot) : ss,
        lot: lot ?? null,
      }),
    );
  };
  if (grouping === 'condition') {
    const c = panel as AnalysisCondition;
    // a variant is its color and marker; its lots, when several, are told apart by dash
    for (const v of variants) push(v, c, VARIANT_LABEL(v), (li) => DASHES[li % DASHES.length]);
  } else {
    const v = panel as AnalysisVariant;
    // one variant per panel, in its color and marker; its conditions by dash, named in the legend
    const conds = conditionOrder(a).filter((c) => c.kind === 'constant');
    conds.forEach((c, ci) => push(v, c, c.name, (li) => DASHES[(ci + li * conds.length) % DASHES.length]));
  }
  return out;
}

/** Every chart of one measured attribute, for the chosen grouping (of all variants, or those picked). */
export function measuredChart(
  a: StudyAnalysis,
  attr: AnalysisAttribute,
  grouping: Grouping,
  fileBase: string,
  opts: { variantIds?: readonly number[] | null } = {},
): MeasuredChart {
  const unit = attr.unit ?? '';
  const dec = isNum(attr.decimals) ? attr.decimals : 2;
  const variants = shownVariants(a, opts.variantIds);
  const variantIds = new Set(variants.map((v) => v.id));
  const conds = conditionOrder(a);
  const panelsOf: (AnalysisVariant | AnalysisCondition)[] = grouping === 'condition' ? conds : variants;
  const left = grouping === 'variant' ? conds.filter((c) => c.kind !== 'constant') : [];
  const note = left.length
    ? `${left.map((c) => c.name).join(', ')}: counted in cycles or runs, not months, so shown when grouped by condition.`
    : null;

  // ---- gather lines and fits of every panel first, so all panels share one y range
  type Reg = { r: Regression; l: ChartLine; spec: LineSpec; end: number };
  type Built = { panel: AnalysisVariant | AnalysisCondition; axis: AxisKind; lines: LineSpec[]; cps: Map<string, Checkpoint[]>; regs: Reg[] };
  const built: Built[] = panelsOf.map((panel) => {
    const axis: AxisKind = grouping === 'condition' ? axisKindOf(panel as AnalysisCondition) : 'months';
    const lines = linesFor(a, attr.id, grouping, panel, variants);
    const cps = new Map(lines.map((l) => [l.key, checkpointsOf(l)]));
    const regs: Reg[] = [];
    if (axis === 'months') {
      for (const r of a.regressions.filter((x) => x.studyAttributeId === attr.id && variantIds.has(x.variantId))) {
        const mine = lines.filter((l) => l.variant.id === r.variantId && l.condition.id === r.studyConditionId);
        if (!mine.length) continue;
        for (const l of r.lines ?? []) {
          const spec = l.batch == null ? mine[0] : (mine.find((m) => m.lot === l.batch) ?? mine[0]);
          regs.push({ r, l, spec, end: fitEnd(r, l) });
        }
      }
    }
    return { panel, axis, lines, cps, regs };
  });

  const xOfCp = (axis: AxisKind, c: { months: number; label: string }, categories: string[]): number | null =>
    axis === 'months' ? c.months : axis === 'cycles' ? cycleOf(c.label, c.months) : categories.indexOf(c.label);

  // one y range for every panel (so panels compare at a glance); each panel its own x range
  const ys: number[] = [];
  const xMaxOf = new Map<Built, number>();
  for (const b of built) {
    let xMax = 0;
    for (const cps of b.cps.values()) {
      for (const c of cps) {
        for (const v of c.values) ys.push(v);
        const x = b.axis === 'checkpoints' ? 0 : xOfCp(b.axis, c, []);
        if (x !== null) xMax = Math.max(xMax, x);
      }
    }
    for (const g of b.regs) {
      const curves = fitCurves(g.l, g.r.limit, g.r.levelPerSide, g.end, 12);
      for (const arr of [curves.fit, curves.lower, curves.upper]) for (const [, y] of arr) ys.push(y);
      xMax = Math.max(xMax, g.end);
    }
    xMaxOf.set(b, xMax);
  }
  const attrLimits = a.limits.filter((l) => l.studyAttributeId === attr.id && variantIds.has(l.variantId));
  for (const l of attrLimits) for (const y of [l.limit.lower, l.limit.upper]) if (isNum(y)) ys.push(y);
  const yr = ys.length ? niceRange(ys.reduce((m, y) => Math.min(m, y), Infinity), ys.reduce((m, y) => Math.max(m, y), -Infinity)) : null;

  const failing: FailingResult[] = [];
  const panels: LinePanel[] = built.map((b) => {
    const { panel, axis, lines, cps, regs } = b;
    const xr = axis === 'cycles' ? niceRange(0, Math.max(xMaxOf.get(b) ?? 0, 1), Math.min(6, Math.max(1, xMaxOf.get(b) ?? 1))) : niceRange(0, Math.max(xMaxOf.get(b) ?? 0, 0.5), 6);
    const isCond = grouping === 'condition';
    const cond = isCond ? (panel as AnalysisCondition) : null;
    const title = isCond ? (panel as AnalysisCondition).name : VARIANT_LABEL(panel as AnalysisVariant);
    const facts = cond ? conditionFacts(cond) : `Lots ${(panel as AnalysisVariant).lots.join(', ') || DASH}`;
    const readings = [...cps.values()].reduce((s, list) => s + list.reduce((t, c) => t + c.values.length, 0), 0);
    const large = readings > LARGE_POINTS;
    // checkpoint labels on the x axis for light exposures and runs
    const categories =
      axis === 'checkpoints' ? [...new Map([...cps.values()].flat().sort((x, y) => x.months - y.months).map((c) => [c.label, c.label])).keys()] : [];
    const xOf = (c: { months: number; label: string }) => xOfCp(axis, c, categories);

    const series: (LineSeriesOption | ScatterSeriesOption)[] = [];
    const fails: (string | number)[][] = [];
    const initial: (string | number)[][] = [];
    const csvRows: CsvFile['rows'] = [];
    for (const l of lines) {
      const list = (cps.get(l.key) ?? []).filter((c) => xOf(c) !== null);
      const data = list
        .map((c) => ({ c, m: mean(c.values) }))
        .filter((x): x is { c: Checkpoint; m: number } => x.m !== null)
        .map(({ c, m }) => [xOf(c) as number, m, c.label, c.values.length === 1 ? '1 reading' : `mean of ${c.values.length} readings`]);
      series.push({
        type: 'line',
        name: l.name,
        data,
        color: l.color,
        lineStyle: { width: 1.5, type: lineType(l.dash) },
        symbol: l.symbol,
        symbolSize: 8,
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
          data: list.flatMap((c) => c.points.filter((x) => isNum(x.p.value)).map((x) => [xOf(c) as number, x.p.value as number, c.label, `sample ${x.p.sampleCode}`])),
          color: l.color,
          symbol: l.symbol,
          symbolSize: large ? 2 : 4,
          itemStyle: { opacity: 0.4 },
          large,
          silent: large,
          z: 2,
        });
      }
      const zero = list.find((c) => Math.abs(c.months) < 1e-9);
      const zm = zero ? mean(zero.values) : null;
      if (zero && zm !== null) initial.push([xOf(zero) as number, zm, zero.label, `${l.name}: initial ${zero.values.length > 1 ? `mean of ${zero.values.length}` : 'value'}`]);
      for (const c of cps.get(l.key) ?? []) {
        for (const { p, s } of c.points) {
          const lim = attrLimits.find((x) => x.variantId === s.variantId)?.limit;
          csvRows.push([attr.name, unit, l.variant.code, s.lotCode, l.condition.name, p.label, isNum(p.months) ? Number(p.months.toFixed(4)) : null, p.dueDate, p.sampleCode, isNum(p.value) ? p.value : null, VERDICT_WORDS[p.verdict] ?? p.verdict, lim?.lower ?? null, lim?.upper ?? null]);
          if (p.verdict === 'fail') {
            const x = xOf(c);
            if (isNum(p.value) && x !== null) fails.push([x, p.value, c.label, `sample ${p.sampleCode} · ${l.name}`]);
            failing.push({ sampleCode: p.sampleCode, variant: l.variant.code, lot: s.lotCode, condition: l.condition.name, label: p.label, months: p.months, inMonths: l.condition.kind === 'constant', value: valueWords(attr, p.value) });
          }
        }
      }
    }

    // ---- fits (months axis only): the mean solid and heavier, its bound dashed, both in the line's color
    const fits: FitNote[] = [];
    for (const g of regs) {
      const color = g.spec.color;
      const c = fitCurves(g.l, g.r.limit, g.r.levelPerSide, g.end);
      const who = g.l.batch && g.spec.lot !== g.l.batch ? `${g.spec.name} (lot ${g.l.batch})` : g.spec.name;
      series.push({ type: 'line', name: SERIES_NAMES.fit, data: c.fit.map(([t, y]) => [t, y, '', `${who}: fitted mean`]), color, symbol: 'none', lineStyle: { width: FIT_WIDTH, type: 'solid', opacity: 0.9 }, z: 1 });
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
          lineStyle: { width: 1.5, type: BOUND_DASH },
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
      fits.push(fitNote(g.r, who, color));
    }
    // a regression with no line to draw still says why (every batch left out, too little data)
    for (const r of a.regressions.filter((x) => x.studyAttributeId === attr.id && variantIds.has(x.variantId) && !(x.lines ?? []).length)) {
      const spec = lines.find((l) => l.variant.id === r.variantId && l.condition.id === r.studyConditionId);
      if (spec && axis === 'months') fits.push(fitNote(r, spec.name, spec.color));
    }

    // ---- acceptance limits: one line per distinct value, labelled once; a band when every line shares both
    const panelVariants = [...new Set(lines.map((l) => l.variant.id))];
    const lims = attrLimits.filter((l) => panelVariants.includes(l.variantId));
    const { lines: limLines, shared } = limitLines(lims);
    const markLines: NonNullable<MarkLineComponentOption['data']> = [];
    let markArea: MarkAreaComponentOption | undefined;
    if (shared) {
      const lo = limLines.find((x) => x.side === 'lower');
      const hi = limLines.find((x) => x.side === 'upper');
      markArea = { silent: true, itemStyle: { color: 'rgba(91,102,112,0.07)' }, label: { show: false }, data: [[{ yAxis: lo?.value ?? yr?.min ?? 0 }, { yAxis: hi?.value ?? yr?.max ?? 0 }]] };
      for (const x of limLines) markLines.push({ yAxis: x.value, name: `${x.side} limit ${x.text}`, lineStyle: { color: LIMIT_COLOR, type: LIMIT_DASH } });
    } else {
      // labels spread along the line so that close limits stay readable; none at the right end, where the
      // fit's crossing marker writes its months above the plot
      const spots = ['insideStartTop', 'insideMiddleTop', 'insideStartBottom', 'insideMiddleBottom'] as const;
      limLines.forEach((x, i) => {
        const codes = x.variantIds.map((id) => a.variants.find((v) => v.id === id)?.code ?? '?');
        const one = x.variantIds.length === 1 && grouping === 'condition' ? lines.find((l) => l.variant.id === x.variantIds[0]) : undefined;
        const who = x.variantIds.length === panelVariants.length && panelVariants.length > 1 ? '' : `${codes.join(', ')} `;
        markLines.push({ yAxis: x.value, name: `${who}${x.side} limit ${x.text}`, lineStyle: { color: one?.color ?? LIMIT_COLOR, type: LIMIT_DASH, width: 1 }, label: { position: spots[i % spots.length] } });
      });
    }
    if (lims.length) {
      series.unshift({
        type: 'line',
        name: SERIES_NAMES.limits,
        data: [],
        color: LIMIT_COLOR,
        lineStyle: { type: LIMIT_DASH, width: 1.25 },
        symbol: 'none',
        markArea,
        markLine: {
          silent: true,
          symbol: 'none',
          lineStyle: { width: 1.25 },
          // at the left end, clear of the axis name: the crossing marker's "16.9 mo" sits above the plot's right part
          label: { formatter: '{b}', position: 'insideStartTop', padding: [1, 3], distance: [24, 2], color: AXIS_TEXT, fontSize: 11, backgroundColor: 'rgba(255,255,255,0.85)' },
          data: markLines,
        },
        z: 0,
      });
    }
    if (initial.length) series.push({ type: 'scatter', name: SERIES_NAMES.initial, data: initial, symbol: INITIAL_SYMBOL, symbolSize: 15, color: INK, itemStyle: { borderWidth: 1.5 }, z: 5 });
    if (fails.length) series.push({ type: 'scatter', name: SERIES_NAMES.fail, data: fails, symbol: FAIL_SYMBOL, symbolSize: 11, color: BAD, itemStyle: { borderColor: '#ffffff', borderWidth: 0.5 }, z: 6 });

    const unitOrName = unit || attr.name;
    const names = series.map((x) => String(x.name ?? ''));
    const legend = legendLayout(names);
    const zoomSpace = large ? 34 : 0;
    const option: ChartOption = {
      animation: !large,
      animationDuration: 300,
      textStyle: { fontFamily: FONT },
      grid: { left: 8, right: 20, top: 36, bottom: 12 + legend.height + zoomSpace, outerBoundsMode: 'same', outerBoundsContain: 'all' },
      tooltip: { ...baseTooltip(), formatter: tooltipFor(unit, dec, axis) },
      legend: bottomLegend(names, zoomSpace),
      toolbox: toolbox(`${fileBase}-${slug(title)}`),
      xAxis:
        axis === 'checkpoints'
          ? { type: 'category', data: categories, name: AXIS_NAMES.checkpoints, nameLocation: 'middle', nameGap: 26, nameTextStyle: { color: AXIS_TEXT }, axisLabel: { color: AXIS_TEXT }, axisLine: { lineStyle: { color: AXIS_LINE } } }
          : {
              type: 'value',
              name: AXIS_NAMES[axis],
              nameLocation: 'middle',
              nameGap: 26,
              nameTextStyle: { color: AXIS_TEXT },
              min: 0,
              max: xr?.max ?? 1,
              interval: xr?.step,
              minInterval: axis === 'cycles' ? 1 : undefined,
              axisLabel: { color: AXIS_TEXT, formatter: (v: number) => (axis === 'cycles' && v === 0 ? 'Initial' : tickText(v, xr?.step ?? 1)) },
              splitLine: { lineStyle: { color: GRID_LINE } },
              axisLine: { lineStyle: { color: AXIS_LINE } },
            },
      yAxis: {
        type: 'value',
        name: unitOrName,
        nameTextStyle: { color: AXIS_TEXT, align: 'left' },
        min: yr?.min,
        max: yr?.max,
        interval: yr?.step,
        scale: true,
        axisLabel: { color: AXIS_TEXT, formatter: (v: number) => tickText(v, yr?.step ?? 1) },
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
      axis,
      variantIndex: isCond ? null : a.variants.findIndex((v) => v.id === (panel as AnalysisVariant).id),
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
      height: 270 + legend.height + zoomSpace,
    };
  });

  failing.sort((x, y) => x.months - y.months || x.condition.localeCompare(y.condition) || x.sampleCode.localeCompare(y.sampleCode));
  return { attribute: attr, panels, failing, note };
}

/** The engine's message of a fit, with its notes apart: batches left out, the other fit, a warning. */
export function fitNote(r: Pick<Regression, 'message' | 'warning' | 'excluded' | 'alternative'>, who: string, color: string): FitNote {
  const excluded = (r.excluded ?? []).map((e) => `Batch ${e.batch} left out: ${e.reason}.`);
  // the engine appends the batches left out to its message; they are listed apart here
  const tail = r.excluded?.length ? ` Left out: batch ${r.excluded.map((e) => `${e.batch} (${e.reason})`).join('; ')}.` : '';
  const message = tail && r.message.endsWith(tail) ? r.message.slice(0, -tail.length) : r.message;
  return { who, color, message, warning: r.warning ?? null, excluded, alternative: r.alternative?.message ?? null };
}
