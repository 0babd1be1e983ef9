/**
 * What every chart of the analysis screens shares: the ECharts option type, ink and reference
 * colors, legend and tooltip builders, the variant styles (shared/chart-style.ts) and the order of
 * conditions. Pure: no DOM, no I/O.
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
import { variantStyle, type AxisKind, type DashStyle, type VariantStyle } from '@shared/chart-style';
import { num } from './format';
import type { AnalysisCondition, AnalysisVariant, StudyAnalysis } from './types';

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

export const INK = '#1f2328';
export const BAD = '#b42318';
export const GRID_LINE = '#e4e7eb';
export const AXIS_TEXT = '#4b5563';
export const AXIS_LINE = '#9aa3ad';
/** Acceptance limits: grey, dash-dot (a pattern no data, fit or bound line uses). */
export const LIMIT_COLOR = '#5b6670';
export const LIMIT_DASH: number[] = [10, 4, 2, 4];
/** The fitted mean: solid and heavier than the data line; its confidence bound: dashed. */
export const FIT_WIDTH = 2.5;
export const BOUND_DASH: number[] = [6, 4];
/** A filled "x" for failing results (a shape of its own, not just a color). */
export const FAIL_SYMBOL = 'path://M2,0 L5,3 L8,0 L10,2 L7,5 L10,8 L8,10 L5,7 L2,10 L0,8 L3,5 L0,2 Z';
/** The initial test (t = 0 of every condition): a hollow diamond drawn around the variants' markers. */
export const INITIAL_SYMBOL = 'emptyDiamond';
export const FONT = 'Inter, system-ui, sans-serif';

export const SERIES_NAMES = {
  fail: 'Fails criterion',
  initial: 'Initial',
  limits: 'Acceptance limits',
  fit: 'Fitted mean',
  bound: 'Confidence bound',
} as const;

/** HTML-escapes text for tooltips (names come from lab data). */
export function esc(s: unknown): string {
  return String(s ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

export const mean = (xs: number[]) => (xs.length ? xs.reduce((s, x) => s + x, 0) / xs.length : null);

/** Constant conditions by setpoint first, then cycles, light and runs. */
export const conditionOrder = (a: Pick<StudyAnalysis, 'conditions'>) =>
  [...a.conditions].sort((x, y) => {
    const k = (c: AnalysisCondition) => (c.kind === 'constant' ? 0 : 1);
    return k(x) - k(y) || (x.setpointC ?? 0) - (y.setpointC ?? 0) || x.id - y.id;
  });

/** The variants to draw: all of the study's, or the ones picked (in the study's order). */
export function shownVariants(a: Pick<StudyAnalysis, 'variants'>, variantIds?: readonly number[] | null): AnalysisVariant[] {
  return variantIds ? a.variants.filter((v) => variantIds.includes(v.id)) : a.variants;
}

/** A variant's color, marker and dash, from its place in the study (the same on every chart). */
export function styleOfVariant(a: Pick<StudyAnalysis, 'variants'>, variantId: number): VariantStyle {
  return variantStyle(Math.max(0, a.variants.findIndex((v) => v.id === variantId)));
}

/** ECharts line type of a dash style. */
export const lineType = (d: DashStyle) => d as 'solid';

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

export const baseTooltip = (): TooltipComponentOption => ({
  trigger: 'item',
  confine: true,
  backgroundColor: '#ffffff',
  borderColor: GRID_LINE,
  textStyle: { color: INK, fontSize: 12 },
});

export const toolbox = (fileBase: string): ToolboxComponentOption => ({
  right: 4,
  top: 0,
  itemSize: 16,
  feature: { saveAsImage: { title: 'Save as PNG', name: fileBase, type: 'png', pixelRatio: 2, backgroundColor: '#ffffff' } },
});

// ------------------------------------------------------------------------------------------ legend

/** Legend text wraps onto a second line past this width (px); the full name shows on hover too. */
export const LEGEND_TEXT_WIDTH = 240;
const LEGEND_ROW = 22;
const LEGEND_WRAPPED_ROW = 36;

/** How reference entries look in the legend: in ink, showing their line style (their series carry each variant's color). */
const REFERENCE_ENTRIES: Readonly<Record<string, object>> = {
  [SERIES_NAMES.limits]: { itemStyle: { opacity: 0 }, lineStyle: { color: LIMIT_COLOR, type: LIMIT_DASH, width: 1.5 } },
  [SERIES_NAMES.fit]: { itemStyle: { opacity: 0 }, lineStyle: { color: INK, type: 'solid', width: FIT_WIDTH } },
  [SERIES_NAMES.bound]: { itemStyle: { opacity: 0 }, lineStyle: { color: INK, type: BOUND_DASH, width: 1.5 } },
  'ΔE00 2 (common practice)': { itemStyle: { opacity: 0 }, lineStyle: { color: LIMIT_COLOR, type: LIMIT_DASH, width: 1.5 } },
};

const textWidth = (s: string) => s.length * 6.6;

/** Legend entries in series order, each once; a long name wraps within LEGEND_TEXT_WIDTH. */
export function legendData(names: string[]) {
  return [...new Set(names)]
    .filter((n) => n !== '')
    .map((name) => ({
      name,
      ...(REFERENCE_ENTRIES[name] ?? {}),
      ...(textWidth(name) > LEGEND_TEXT_WIDTH ? { textStyle: { width: LEGEND_TEXT_WIDTH, overflow: 'break' as const, lineHeight: 15 } } : {}),
    }));
}

/** Rows and pixel height a wrapping legend needs for these names in a chart `width` px wide. */
export function legendLayout(names: string[], width = 480): { rows: number; height: number } {
  let rows = 0;
  let height = 0;
  let x = Infinity;
  let rowTall = false;
  for (const n of [...new Set(names)].filter((s) => s !== '')) {
    const tw = Math.min(LEGEND_TEXT_WIDTH, textWidth(n));
    const w = 26 + 5 + tw + 14;
    const tall = textWidth(n) > LEGEND_TEXT_WIDTH;
    if (x + w > width) {
      if (rows) height += rowTall ? LEGEND_WRAPPED_ROW : LEGEND_ROW;
      rows += 1;
      x = 0;
      rowTall = false;
    }
    x += w;
    rowTall ||= tall;
  }
  if (rows) height += rowTall ? LEGEND_WRAPPED_ROW : LEGEND_ROW;
  return { rows, height };
}

/** Rows a wrapping legend needs (kept for callers that count rows). */
export function legendRowsFor(names: string[], width = 480): number {
  return Math.max(1, legendLayout(names, width).rows);
}

/** A legend at the bottom that wraps long names and shows each full name on hover. */
export function bottomLegend(names: string[], bottom: number): LegendComponentOption {
  return {
    data: legendData(names),
    type: 'plain',
    bottom,
    left: 0,
    right: 0,
    itemWidth: 26,
    itemHeight: 10,
    itemGap: 14,
    textStyle: { color: AXIS_TEXT, fontSize: 12 },
    tooltip: { show: true, formatter: (p: unknown) => esc((p as { name?: string }).name) },
  };
}

// ------------------------------------------------------------------------------------------ tooltip

type TooltipParams = { seriesName?: string; value?: unknown; color?: unknown };

/** "Week 4 · 0.92 months", "Cycle 2" or the checkpoint label, then the value with its unit. */
export function tooltipFor(unit: string, decimals: number, axis: AxisKind | boolean) {
  const kind: AxisKind = axis === true ? 'checkpoints' : axis === false ? 'months' : axis;
  return (raw: unknown): string => {
    const p = (Array.isArray(raw) ? raw[0] : raw) as TooltipParams;
    const v = Array.isArray(p?.value) ? (p.value as unknown[]) : [];
    const [x, y, label, detail] = v;
    const when =
      kind === 'months' ? `${label ? `${esc(label)} · ` : ''}${num(x, 2)} months` : label ? esc(label) : kind === 'cycles' ? `cycle ${num(x, 0)}` : '';
    const value = `${num(y, decimals)}${unit ? ` ${esc(unit)}` : ''}`;
    return `<div style="font-weight:600">${esc(p?.seriesName)}</div><div>${when}</div><div><b>${value}</b>${detail ? ` · ${esc(detail)}` : ''}</div>`;
  };
}

export type { TooltipParams };
