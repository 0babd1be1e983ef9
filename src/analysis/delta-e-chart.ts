/**
 * Color difference from the initial test (ΔE00 or ΔE*ab) per variant and condition: each variant in
 * its own color and marker (shared/chart-style.ts), each condition in its own dash. Cycles and runs
 * go to the table and the CSV only (they are not months). Pure: no DOM, no I/O.
 */
import type { LineSeriesOption } from 'echarts/charts';
import { DASHES, niceRange, tickText } from '@shared/chart-style';
import { COMPARED_LEVEL_LABELS, COMPARED_LEVELS, type ComparedLevel } from '@shared/compute/criteria';
import type { CsvFile } from './csv';
import {
  AXIS_LINE,
  AXIS_TEXT,
  baseTooltip,
  bottomLegend,
  conditionOrder,
  FONT,
  GRID_LINE,
  LARGE_POINTS,
  legendLayout,
  LIMIT_COLOR,
  LIMIT_DASH,
  lineType,
  mean,
  styleOfVariant,
  toolbox,
  tooltipFor,
  type ChartOption,
  type Grouping,
} from './chart-common';
import { isNum } from './format';
import type { StudyAnalysis } from './types';

export type DeltaMetric = 'de00' | 'de76';
export const DELTA_LABELS: Readonly<Record<DeltaMetric, string>> = { de00: 'ΔE00 (CIEDE2000)', de76: 'ΔE*ab (CIE 1976)' };
const REFERENCE = 'ΔE00 2 (common practice)';

export interface DeltaRow {
  variant: string;
  condition: string;
  label: string;
  months: number;
  samples: number;
  de76: number | null;
  de00: number | null;
  /** The graded color judgement (by eye, versus control) at that checkpoint: the worst of the samples. */
  byEye: string | null;
}

/** The worst "Color" comparison (by eye) of a variant and condition at a checkpoint label. */
function colorByEye(a: StudyAnalysis, variantId: number, conditionId: number, label: string): string | null {
  const attr = a.attributes.find((x) => x.code === 'color' && x.kind === 'compared');
  if (!attr) return null;
  const seen = a.series
    .filter((s) => s.studyAttributeId === attr.id && s.variantId === variantId && s.studyConditionId === conditionId)
    .flatMap((s) => s.points.filter((p) => p.label === label && typeof p.value === 'string').map((p) => p.value as ComparedLevel));
  const worst = seen.sort((x, y) => COMPARED_LEVELS.indexOf(y) - COMPARED_LEVELS.indexOf(x))[0];
  return worst ? (COMPARED_LEVEL_LABELS[worst] ?? worst) : null;
}

export interface DeltaChart {
  option: ChartOption;
  csv: CsvFile;
  /** The latest ΔE per variant and condition. */
  latest: DeltaRow[];
  note: string | null;
  empty: boolean;
  /** Pixel height the chart needs (legend rows). */
  height: number;
}

/** Color difference from the initial test per variant and condition (mean over samples at each checkpoint). */
export function deltaEChart(a: StudyAnalysis, metric: DeltaMetric, grouping: Grouping, fileBase: string): DeltaChart {
  const conds = conditionOrder(a);
  const constant = conds.filter((c) => c.kind === 'constant');
  const left = conds.filter((c) => c.kind !== 'constant' && a.deltaE.some((d) => d.studyConditionId === c.id));
  const series: LineSeriesOption[] = [];
  const latest: DeltaRow[] = [];
  const csvRows: CsvFile['rows'] = [];
  let count = 0;
  let xMax = 0;
  let yMax = 0;
  for (const v of a.variants) {
    const st = styleOfVariant(a, v.id);
    for (const c of conds) {
      for (const source of ['instrument', 'photo'] as const) {
        const ds = a.deltaE.filter((d) => d.variantId === v.id && d.studyConditionId === c.id && (d.source ?? 'instrument') === source);
        if (!ds.length) continue;
        const tag = source === 'photo' ? ' · photo' : '';
        const byLabel = new Map<string, { months: number; de76: number[]; de00: number[] }>();
        for (const d of ds) {
          for (const p of d.points) {
            csvRows.push([v.code, c.name + tag, d.sampleCode, p.label, isNum(p.months) ? Number(p.months.toFixed(4)) : null, p.de76, p.de00]);
            const g = byLabel.get(p.label) ?? { months: p.months, de76: [], de00: [] };
            if (isNum(p.de76)) g.de76.push(p.de76);
            if (isNum(p.de00)) g.de00.push(p.de00);
            byLabel.set(p.label, g);
          }
        }
        const points = [...byLabel.entries()].filter(([, g]) => isNum(g.months)).sort((x, y) => x[1].months - y[1].months);
        const last = points[points.length - 1];
        if (last) latest.push({ variant: v.code, condition: c.name + tag, label: last[0], months: last[1].months, samples: ds.length, de76: mean(last[1].de76), de00: mean(last[1].de00), byEye: colorByEye(a, v.id, c.id, last[0]) });
        if (c.kind !== 'constant') continue;
        const ci = constant.indexOf(c);
        const data = points
          .map(([label, g]) => [g.months, mean(g[metric]), label] as const)
          .filter((d) => isNum(d[1]))
          .map((d) => [d[0], d[1] as number, d[2], `mean of ${ds.length} ${ds.length === 1 ? 'sample' : 'samples'}`]);
        count += data.length;
        for (const d of data) {
          xMax = Math.max(xMax, d[0] as number);
          yMax = Math.max(yMax, d[1] as number);
        }
        series.push({
          type: 'line',
          name: (grouping === 'condition' ? `${v.code} · ${c.name}` : `${c.name} · ${v.code}`) + tag,
          data,
          color: st.color,
          // Photo estimates: thinner and dotted, named "· photo" in the legend.
          lineStyle: source === 'photo' ? { width: 1.25, type: 'dotted' } : { width: 1.75, type: lineType(DASHES[ci % DASHES.length]) },
          symbol: st.symbol,
          symbolSize: 8,
          showSymbol: count <= LARGE_POINTS,
        });
      }
    }
  }
  const large = count > LARGE_POINTS;
  if (grouping === 'variant') series.sort((x, y) => String(x.name).localeCompare(String(y.name)));
  if (metric === 'de00' && series.length) {
    series.unshift({
      type: 'line',
      name: REFERENCE,
      data: [],
      color: LIMIT_COLOR,
      symbol: 'none',
      lineStyle: { type: LIMIT_DASH, width: 1.25 },
      markLine: {
        silent: true,
        symbol: 'none',
        lineStyle: { color: LIMIT_COLOR, type: LIMIT_DASH, width: 1.25 },
        label: { formatter: 'ΔE00 2', position: 'insideStartTop', color: AXIS_TEXT, fontSize: 11 },
        data: [{ yAxis: 2 }],
      },
    });
  }
  const names = series.map((x) => String(x.name ?? ''));
  const legend = legendLayout(names, 1000);
  // the common-practice line stays in view
  const yr = niceRange(0, Math.max(yMax, metric === 'de00' ? 2.4 : 0.5), 5);
  const xr = niceRange(0, Math.max(xMax, 0.5), 6);
  const option: ChartOption = {
    animation: !large,
    animationDuration: 300,
    textStyle: { fontFamily: FONT },
    grid: { left: 8, right: 20, top: 36, bottom: 12 + legend.height, outerBoundsMode: 'same', outerBoundsContain: 'all' },
    tooltip: { ...baseTooltip(), formatter: tooltipFor('', 2, 'months') },
    legend: bottomLegend(names, 0),
    toolbox: toolbox(`${fileBase}-${metric}`),
    xAxis: {
      type: 'value',
      name: 'Months',
      nameLocation: 'middle',
      nameGap: 26,
      nameTextStyle: { color: AXIS_TEXT },
      min: 0,
      max: xr?.max,
      interval: xr?.step,
      axisLabel: { color: AXIS_TEXT, formatter: (v: number) => tickText(v, xr?.step ?? 1) },
      splitLine: { lineStyle: { color: GRID_LINE } },
      axisLine: { lineStyle: { color: AXIS_LINE } },
    },
    yAxis: {
      type: 'value',
      name: DELTA_LABELS[metric],
      min: 0,
      max: yr?.max,
      interval: yr?.step,
      nameTextStyle: { color: AXIS_TEXT, align: 'left' },
      axisLabel: { color: AXIS_TEXT, formatter: (v: number) => tickText(v, yr?.step ?? 1) },
      splitLine: { lineStyle: { color: GRID_LINE } },
    },
    series,
  };
  return {
    option,
    csv: { fileName: `${fileBase}.csv`, header: ['Variant', 'Condition', 'Sample', 'Checkpoint', 'Months', 'ΔE*ab (CIE 1976)', 'ΔE00 (CIEDE2000)'], rows: csvRows },
    latest,
    note:
      [
        left.length ? `${left.map((c) => c.name).join(', ')}: counted in cycles or runs, so in the table and the CSV only.` : '',
        a.deltaE.some((d) => d.source === 'photo')
          ? 'Lines marked "photo" (dotted) are estimated from photos with a reference card (white balance corrected against the card, CIEDE2000); an instrument reading wins where both exist.'
          : '',
      ]
        .filter(Boolean)
        .join(' ') || null,
    empty: a.deltaE.length === 0,
    height: 260 + legend.height,
  };
}
