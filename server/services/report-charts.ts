/**
 * The charts of the stability report (PDF): per measured attribute, small multiples, one chart per
 * condition (months for storage at a temperature, cycles for freeze-thaw, never both on one axis).
 * Each variant keeps its color, marker and dash from shared/chart-style.ts, as on screen, so the
 * lines stay apart in black-and-white print; axes in round steps; one limit line per distinct value
 * at the precision the engine used; the legend as text beside the charts, clear of every axis.
 * ECharts renders each chart as SVG on the server (pdfmake draws it). Pure apart from ECharts.
 */
import * as echarts from 'echarts';
import {
  axisKindOf,
  cycleOf,
  dashArray,
  limitLines,
  markerSvg,
  niceRange,
  tickText,
  variantStyle,
  type AxisKind,
} from '../../shared/chart-style';
import { fitCurves, fitEnd } from '../../shared/fit-curves';
import type { AnalysisAttribute, AnalysisCondition, StudyAnalysis } from '../../shared/schemas/analysis';

/** Chart size in SVG pixels, drawn CHART_PT points wide (two across an A4 page's text width). */
const W = 340;
const H = 220;
export const CHART_PT = 243;
const INK = '#111111';
const AXIS = '#444444';
const GRID = '#e3e3e3';
const LIMIT = '#555555';
const LIMIT_DASH = [10, 4, 2, 4];
const BOUND_DASH = [2, 2];
const FONT = 'Inter, sans-serif';

const isNum = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
const mean = (xs: number[]) => xs.reduce((s, x) => s + x, 0) / xs.length;

export interface PanelLine {
  variantIndex: number;
  name: string;
  /** [x, mean of the readings at that checkpoint, label]. */
  points: [number, number, string][];
}

export interface ReportPanel {
  condition: AnalysisCondition;
  axis: AxisKind;
  lines: PanelLine[];
  fits: { variantIndex: number; fit: [number, number][]; bounds: [number, number][][]; crossing: number | null }[];
  limits: ReturnType<typeof limitLines>['lines'];
  shared: boolean;
  categories: string[];
  xMax: number;
}

const AXIS_NAMES: Readonly<Record<AxisKind, string>> = { months: 'Months', cycles: 'Freeze-thaw cycles', checkpoints: 'Checkpoint' };

/** The panels of one attribute: one per condition with results past the initial test. */
export function reportPanels(a: StudyAnalysis, attr: AnalysisAttribute): { panels: ReportPanel[]; onlyInitial: AnalysisCondition[] } {
  const conds = [...a.conditions].sort((x, y) => (x.kind === 'constant' ? 0 : 1) - (y.kind === 'constant' ? 0 : 1) || (x.setpointC ?? 0) - (y.setpointC ?? 0) || x.id - y.id);
  const panels: ReportPanel[] = [];
  const onlyInitial: AnalysisCondition[] = [];
  for (const c of conds) {
    const axis = axisKindOf(c);
    const all = a.series.filter((s) => s.studyConditionId === c.id && s.studyAttributeId === attr.id).flatMap((s) => s.points);
    const labels = [...new Map(all.filter((p) => isNum(p.months)).sort((x, y) => x.months - y.months).map((p) => [p.label, p.label])).keys()];
    const xOf = (p: { label: string; months: number }): number | null => (axis === 'months' ? p.months : axis === 'cycles' ? cycleOf(p.label, p.months) : labels.indexOf(p.label));
    const lines: PanelLine[] = [];
    a.variants.forEach((v, vi) => {
      const byX = new Map<number, { ys: number[]; label: string }>();
      for (const s of a.series.filter((x) => x.variantId === v.id && x.studyConditionId === c.id && x.studyAttributeId === attr.id)) {
        for (const p of s.points) {
          const x = isNum(p.months) ? xOf(p) : null;
          if (x === null || typeof p.value !== 'number' || !isNum(p.value)) continue;
          const k = Math.round(x * 1e6) / 1e6;
          const g = byX.get(k) ?? { ys: [], label: p.label };
          g.ys.push(p.value);
          byX.set(k, g);
        }
      }
      if (byX.size) lines.push({ variantIndex: vi, name: `${v.code}${v.name && v.name !== v.code ? ` · ${v.name}` : ''}`, points: [...byX.entries()].sort((p, q) => p[0] - q[0]).map(([x, g]) => [x, mean(g.ys), g.label]) });
    });
    if (!lines.length) continue;
    if (lines.every((l) => l.points.every(([x]) => x === 0))) {
      onlyInitial.push(c);
      continue;
    }
    const fits: ReportPanel['fits'] = [];
    let xMax = Math.max(...lines.flatMap((l) => l.points.map(([x]) => x)));
    if (axis === 'months') {
      for (const r of a.regressions.filter((x) => x.studyAttributeId === attr.id && x.studyConditionId === c.id)) {
        const vi = a.variants.findIndex((v) => v.id === r.variantId);
        for (const l of r.lines ?? []) {
          const end = fitEnd(r, l);
          const cv = fitCurves(l, r.limit, r.levelPerSide, end, 32);
          const crossing = r.status === 'crossed' && isNum(r.months) && r.months <= end ? r.months : null;
          fits.push({ variantIndex: vi, fit: cv.fit, bounds: [cv.lower, cv.upper].filter((b) => b.length), crossing });
          xMax = Math.max(xMax, end);
        }
      }
    }
    const lims = a.limits.filter((l) => l.studyAttributeId === attr.id && lines.some((x) => a.variants[x.variantIndex]?.id === l.variantId));
    const { lines: limits, shared } = limitLines(lims);
    panels.push({ condition: c, axis, lines, fits, limits, shared, categories: axis === 'checkpoints' ? labels : [], xMax });
  }
  return { panels, onlyInitial };
}

/** One y range for every panel of an attribute (so they compare at a glance), holding data, fits and limits. */
export function sharedYRange(panels: ReportPanel[]) {
  const ys: number[] = [];
  for (const p of panels) {
    for (const l of p.lines) for (const [, y] of l.points) ys.push(y);
    for (const f of p.fits) for (const arr of [f.fit, ...f.bounds]) for (const [, y] of arr) ys.push(y);
    for (const l of p.limits) ys.push(l.value);
  }
  if (!ys.length) return null;
  return niceRange(Math.min(...ys), Math.max(...ys), 5);
}

/** One panel as an SVG string. */
export function panelSvg(a: StudyAnalysis, p: ReportPanel, unit: string, yr: { min: number; max: number; step: number } | null): string {
  const chart = echarts.init(null, null, { renderer: 'svg', ssr: true, width: W, height: H });
  const xr = p.axis === 'cycles' ? niceRange(0, Math.max(1, p.xMax), Math.min(6, Math.max(1, p.xMax))) : p.axis === 'months' ? niceRange(0, Math.max(0.5, p.xMax), 6) : null;
  const codes = (ids: number[]) => ids.map((id) => a.variants.find((v) => v.id === id)?.code ?? '?').join(', ');
  const series: object[] = [];
  // labels at the left and the middle, never the right end, where a crossing writes its months; a limit of
  // one variant alone in that variant's color
  const limitMarks = p.limits.map((l, i) => ({
    yAxis: l.value,
    name: `${p.shared || p.lines.length === 1 ? '' : `${codes(l.variantIds)} `}${l.side} limit ${l.text}`,
    lineStyle: { color: !p.shared && l.variantIds.length === 1 ? variantStyle(a.variants.findIndex((v) => v.id === l.variantIds[0])).color : LIMIT, type: LIMIT_DASH, width: 1 },
    label: { position: i % 2 === 0 ? 'insideStartTop' : 'insideMiddleTop' },
  }));
  if (limitMarks.length) {
    series.push({
      type: 'line',
      data: [],
      markLine: {
        silent: true,
        symbol: 'none',
        lineStyle: { color: LIMIT, type: LIMIT_DASH, width: 1 },
        label: { formatter: '{b}', fontSize: 10, color: AXIS, backgroundColor: 'rgba(255,255,255,0.85)', padding: [1, 2] },
        data: limitMarks,
      },
    });
  }
  for (const f of p.fits) {
    const st = variantStyle(f.variantIndex);
    series.push({ type: 'line', data: f.fit, symbol: 'none', lineStyle: { color: st.color, width: 1.2, type: 'solid' }, z: 1 });
    f.bounds.forEach((b, i) =>
      series.push({
        type: 'line',
        data: b,
        symbol: 'none',
        lineStyle: { color: st.color, width: 1.2, type: BOUND_DASH },
        z: 1,
        markLine:
          i === 0 && f.crossing !== null
            ? { silent: true, symbol: 'none', lineStyle: { color: st.color, type: 'solid', width: 0.8 }, label: { formatter: `${tickText(f.crossing, 0.1)} mo`, fontSize: 10, color: INK, position: 'end' }, data: [{ xAxis: f.crossing }] }
            : undefined,
      }),
    );
  }
  for (const l of p.lines) {
    const st = variantStyle(l.variantIndex);
    series.push({
      type: 'line',
      data: l.points.map(([x, y]) => [x, y]),
      symbol: st.symbol,
      symbolSize: 7,
      lineStyle: { color: st.color, width: 1.5, type: st.dash },
      itemStyle: { color: st.color, borderColor: st.color },
      z: 3,
    });
  }
  chart.setOption({
    animation: false,
    backgroundColor: '#ffffff',
    textStyle: { fontFamily: FONT, color: AXIS },
    grid: { left: 6, right: 14, top: unit ? 26 : 12, bottom: 6, outerBoundsMode: 'same', outerBoundsContain: 'all' },
    xAxis:
      p.axis === 'checkpoints'
        ? { type: 'category', data: p.categories, name: AXIS_NAMES.checkpoints, nameLocation: 'middle', nameGap: 22, axisLabel: { fontSize: 11, color: AXIS }, axisLine: { lineStyle: { color: AXIS } } }
        : {
            type: 'value',
            name: AXIS_NAMES[p.axis],
            nameLocation: 'middle',
            nameGap: 22,
            nameTextStyle: { fontSize: 11, color: AXIS },
            min: 0,
            max: xr?.max,
            interval: xr?.step,
            axisLabel: { fontSize: 11, color: AXIS, formatter: (v: number) => (p.axis === 'cycles' && v === 0 ? 'Initial' : tickText(v, xr?.step ?? 1)) },
            axisLine: { lineStyle: { color: AXIS } },
            splitLine: { show: false },
          },
    yAxis: {
      type: 'value',
      name: unit,
      nameTextStyle: { fontSize: 11, color: AXIS, align: 'left' },
      min: yr?.min,
      max: yr?.max,
      interval: yr?.step,
      axisLabel: { fontSize: 11, color: AXIS, formatter: (v: number) => tickText(v, yr?.step ?? 1) },
      axisLine: { show: true, lineStyle: { color: AXIS } },
      splitLine: { lineStyle: { color: GRID } },
    },
    series,
  });
  const svg = chart.renderToSVGString();
  chart.dispose();
  return svg;
}

/** A legend swatch: a short line in a dash, with a marker (or none). */
export function swatchSvg(color: string, dash: string, marker: Parameters<typeof markerSvg>[0] | null, width = 1.5): string {
  return `<svg xmlns="http://www.w3.org/2000/svg" width="26" height="10" viewBox="0 0 26 10"><line x1="1" y1="5" x2="25" y2="5" stroke="${color}" stroke-width="${width}"${dash ? ` stroke-dasharray="${dash}"` : ''}/>${marker ? markerSvg(marker, 13, 5, 7, color) : ''}</svg>`;
}

/** pdfmake content for one measured attribute: the legend as text, then the charts two across. */
export function attributeCharts(a: StudyAnalysis, attr: AnalysisAttribute): unknown[] {
  const { panels, onlyInitial } = reportPanels(a, attr);
  if (!panels.length && !onlyInitial.length) return [];
  const unit = attr.unit ?? '';
  const yr = sharedYRange(panels);
  const shownVariants = [...new Set(panels.flatMap((p) => p.lines.map((l) => l.variantIndex)))].sort((x, y) => x - y);
  const item = (svg: string, text: string) => ({ columns: [{ svg, width: 26 }, { text, fontSize: 8, margin: [0, 0.5, 0, 0] }], columnGap: 4, width: 'auto' });
  const items = shownVariants.map((vi) => {
    const v = a.variants[vi];
    const st = variantStyle(vi);
    return item(swatchSvg(st.color, dashArray(st.dash), st.marker), `${v.code}${v.name && v.name !== v.code ? ` · ${v.name}` : ''}`);
  });
  if (panels.some((p) => p.limits.length)) items.push(item(swatchSvg(LIMIT, LIMIT_DASH.join(' '), null, 1), 'acceptance limit'));
  if (panels.some((p) => p.fits.length)) {
    items.push(item(swatchSvg(INK, '', null, 1.2), 'fitted mean (ICH Q1E)'));
    items.push(item(swatchSvg(INK, BOUND_DASH.join(' '), null, 1.2), 'one-sided confidence bound'));
  }
  const legendRows: unknown[] = [];
  for (let i = 0; i < items.length; i += 3) legendRows.push({ columns: items.slice(i, i + 3), columnGap: 14, margin: [0, 1, 0, 1] });

  const cell = (p: ReportPanel) => ({
    stack: [
      { text: p.condition.name, bold: true, fontSize: 8.5 },
      { svg: panelSvg(a, p, unit, yr), width: CHART_PT },
    ],
    width: CHART_PT,
  });
  const grid: unknown[] = [];
  for (let i = 0; i < panels.length; i += 2) {
    grid.push({ columns: panels.slice(i, i + 2).map(cell), columnGap: 12, margin: [0, 4, 0, 4], unbreakable: true });
  }
  const notes: unknown[] = [];
  if (onlyInitial.length) notes.push({ text: `${onlyInitial.map((c) => c.name).join(', ')}: only the initial test so far (no chart).`, style: 'muted', margin: [0, 2, 0, 0] });
  // the attribute's name and legend stay on the page of its first row of charts
  return [
    { stack: [{ text: `${attr.name}${unit ? ` (${unit})` : ''}`, bold: true, fontSize: 10.5, margin: [0, 8, 0, 3] }, ...legendRows, ...grid.slice(0, 1), ...(grid.length ? [] : notes)], unbreakable: true },
    ...grid.slice(1),
    ...(grid.length ? notes : []),
  ];
}
