/**
 * Graded, compared and pass/fail attributes as a sample x checkpoint heat grid with our palette,
 * the grade or level written in each cell and a legend that says what each step means. Freeze-thaw
 * cycles get a grid of their own, so cycles and weeks never share a column order; the initial test
 * (t = 0 of every condition) is one row per sample, not one per condition. Pure: no DOM, no I/O.
 */
import type { HeatmapSeriesOption } from 'echarts/charts';
import { isCycleLabel, variantStyle, type MarkerShape } from '@shared/chart-style';
import type { CsvFile } from './csv';
import { AXIS_TEXT, baseTooltip, conditionOrder, esc, FONT, INK, shownVariants, toolbox, type ChartOption, type FailingResult, type Grouping, type TooltipParams } from './chart-common';
import { DASH, isNum, levelsOf, levelValue, VERDICT_WORDS } from './format';
import type { AnalysisAttribute, Series, StudyAnalysis } from './types';

/** One step of a heat grid's legend. */
export interface HeatStep {
  value: number;
  label: string;
  color: string;
  textColor: string;
}

/** One grid: the results over time, or those over freeze-thaw cycles. */
export interface HeatGridPart {
  key: 'time' | 'cycles';
  /** A heading when the attribute has both grids. */
  title: string | null;
  option: ChartOption;
  /** Pixel height the chart needs for its rows. */
  height: number;
  rows: number;
  columns: string[];
}

export interface HeatGrid {
  attribute: AnalysisAttribute;
  parts: HeatGridPart[];
  csv: CsvFile;
  /** Sample rows over all grids. */
  rows: number;
  steps: HeatStep[];
  failing: FailingResult[];
  empty: boolean;
}

/** Our heat palette, best to worst: pale petrol, straw, ochre, terracotta, deep brick. */
export const HEAT_PALETTE = ['#e3efed', '#f2e2ae', '#e6b46e', '#d67a52', '#9e2f25'];
const HEAT_TEXT = [INK, INK, INK, INK, '#ffffff'];

/** A marker shape as a text glyph, for row labels. */
const GLYPH: Readonly<Record<MarkerShape, string>> = {
  circle: '●',
  square: '■',
  triangle: '▲',
  diamond: '◆',
  triangleDown: '▼',
  ring: '○',
  squareOpen: '□',
  triangleOpen: '△',
};

/** Palette steps for n levels, spread over the palette (2 levels: best and worst). */
export function heatSteps(levels: { value: number; label: string }[]): HeatStep[] {
  const n = levels.length;
  return levels.map((l, i) => {
    const k = n <= 1 ? 0 : Math.round((i * (HEAT_PALETTE.length - 1)) / (n - 1));
    return { value: l.value, label: l.label, color: HEAT_PALETTE[k], textColor: HEAT_TEXT[k] };
  });
}

/** Checkpoints shared by several conditions: the initial test, t = 0 of each. */
function initialCheckpoints(series: Series[]): Set<number> {
  const conds = new Map<number, Set<number>>();
  for (const s of series) {
    for (const p of s.points) {
      const set = conds.get(p.checkpointId) ?? new Set<number>();
      set.add(s.studyConditionId);
      conds.set(p.checkpointId, set);
    }
  }
  const out = new Set<number>();
  for (const s of series) for (const p of s.points) if (p.label === 'Initial' || (conds.get(p.checkpointId)?.size ?? 0) > 1) out.add(p.checkpointId);
  return out;
}

/** The sample x checkpoint grids of a graded, compared or pass/fail attribute (of all variants, or those picked). */
export function heatGrid(
  a: StudyAnalysis,
  attr: AnalysisAttribute,
  grouping: Grouping,
  fileBase: string,
  opts: { variantIds?: readonly number[] | null } = {},
): HeatGrid {
  const levels = levelsOf(attr);
  const steps = heatSteps(levels.map((l) => ({ value: l.value, label: l.label })));
  const shortOf = new Map(levels.map((l) => [l.value, l.short]));
  const condIndex = new Map(conditionOrder(a).map((c, i) => [c.id, i]));
  const shown = new Set(shownVariants(a, opts.variantIds).map((v) => v.id));
  const variantIndex = new Map(a.variants.map((v, i) => [v.id, i]));
  const series = a.series.filter((s) => s.studyAttributeId === attr.id && shown.has(s.variantId));
  const initialIds = initialCheckpoints(series);
  const cyclingIds = new Set(a.conditions.filter((c) => c.kind === 'cycling').map((c) => c.id));
  const hasTime = series.some((s) => !cyclingIds.has(s.studyConditionId));

  type Row = { key: string; label: string; s: Series; sampleCode: string; initial: boolean; part: HeatGridPart['key'] };
  const rowMap = new Map<string, Row>();
  const cols = { time: new Map<string, number>(), cycles: new Map<string, number>() };
  const keyOf = (s: Series, p: { checkpointId: number; sampleCode: string }) =>
    initialIds.has(p.checkpointId) ? `init:${s.batchId}:${p.sampleCode}` : `${s.studyConditionId}:${s.batchId}:${p.sampleCode}`;
  const partOf = (s: Series, initial: boolean): HeatGridPart['key'] => (initial ? (hasTime ? 'time' : 'cycles') : cyclingIds.has(s.studyConditionId) ? 'cycles' : 'time');
  for (const s of series) {
    const v = a.variants.find((x) => x.id === s.variantId);
    const c = a.conditions.find((x) => x.id === s.studyConditionId);
    for (const p of s.points) {
      const initial = initialIds.has(p.checkpointId);
      const key = keyOf(s, p);
      const part = partOf(s, initial);
      if (!rowMap.has(key)) {
        const lot = v && v.lots.length > 1 ? ` · ${s.lotCode}` : '';
        const where = initial ? 'Initial test' : (c?.name ?? '?');
        const label = grouping === 'condition' ? `${where} · ${v?.code ?? '?'}${lot} · ${p.sampleCode}` : `${v?.code ?? '?'}${lot} · ${where} · ${p.sampleCode}`;
        rowMap.set(key, { key, label, s, sampleCode: p.sampleCode, initial, part });
      }
      const m = part === 'cycles' ? (isCycleLabel(p.label) ? Number(/\d+/.exec(p.label)?.[0]) : 0) : isNum(p.months) ? p.months : 0;
      const map = cols[part];
      map.set(p.label, Math.min(map.get(p.label) ?? Infinity, m));
    }
  }
  const rank = (r: Row) => {
    const ci = r.initial ? -1 : (condIndex.get(r.s.studyConditionId) ?? 0);
    const vi = variantIndex.get(r.s.variantId) ?? 0;
    return grouping === 'condition' ? [ci, vi] : [vi, ci];
  };
  const allRows = [...rowMap.values()].sort((x, y) => {
    const [a1, a2] = rank(x);
    const [b1, b2] = rank(y);
    return a1 - b1 || a2 - b2 || x.s.lotCode.localeCompare(y.s.lotCode) || x.sampleCode.localeCompare(y.sampleCode);
  });

  const csvRows: CsvFile['rows'] = [];
  const failing: FailingResult[] = [];
  const listed = new Set<string>();
  const dataOf = { time: [] as NonNullable<HeatmapSeriesOption['data']>, cycles: [] as NonNullable<HeatmapSeriesOption['data']> };
  const partRows = { time: allRows.filter((r) => r.part === 'time'), cycles: allRows.filter((r) => r.part === 'cycles') };
  const columnsOf = (k: HeatGridPart['key']) => [...cols[k].entries()].sort((x, y) => x[1] - y[1]).map(([label]) => label);
  const columns = { time: columnsOf('time'), cycles: columnsOf('cycles') };
  const rowIndex = { time: new Map(partRows.time.map((r, i) => [r.key, i])), cycles: new Map(partRows.cycles.map((r, i) => [r.key, i])) };
  for (const s of series) {
    const v = a.variants.find((x) => x.id === s.variantId);
    const c = a.conditions.find((x) => x.id === s.studyConditionId);
    for (const p of s.points) {
      const initial = initialIds.has(p.checkpointId);
      const key = keyOf(s, p);
      // the initial test joins every condition's series: one cell, one CSV row
      if (initial) {
        if (listed.has(`${key}:${p.checkpointId}`)) continue;
        listed.add(`${key}:${p.checkpointId}`);
      }
      const part = partOf(s, initial);
      const lv = levelValue(attr.kind, p.value);
      const r = rowIndex[part].get(key) as number;
      const x = columns[part].indexOf(p.label);
      const meaning = levels.find((l) => l.value === lv)?.label ?? (p.verdict === 'not_done' ? 'not done' : DASH);
      csvRows.push([attr.name, p.sampleCode, v?.code ?? '', s.lotCode, initial ? 'Initial test' : (c?.name ?? ''), p.label, isNum(p.months) ? Number(p.months.toFixed(4)) : null, lv, meaning, VERDICT_WORDS[p.verdict] ?? p.verdict]);
      if (p.verdict === 'fail') {
        failing.push({ sampleCode: p.sampleCode, variant: v?.code ?? '', lot: s.lotCode, condition: initial ? 'Initial test' : (c?.name ?? ''), label: p.label, months: p.months, inMonths: c?.kind === 'constant', value: meaning });
      }
      if (lv === null) continue;
      const step = steps.find((st) => st.value === lv);
      const fail = p.verdict === 'fail';
      dataOf[part].push({
        value: [x, r, lv, `${shortOf.get(lv) ?? lv}${fail ? ' ✕' : ''}`, meaning, VERDICT_WORDS[p.verdict] ?? p.verdict],
        label: { color: step?.textColor ?? INK, fontWeight: fail ? 700 : 500 },
      });
    }
  }
  failing.sort((x, y) => x.months - y.months || x.sampleCode.localeCompare(y.sampleCode));

  const both = partRows.time.length > 0 && partRows.cycles.length > 0;
  const parts: HeatGridPart[] = (['time', 'cycles'] as const)
    .filter((k) => partRows[k].length > 0)
    .map((k, i) => {
      const rows = partRows[k];
      const cols = columns[k];
      const rowHeight = 26;
      // the first grid carries the legend of the steps above its column labels
      const top = i === 0 ? 64 : 32;
      const bottom = 12;
      const height = Math.max(i === 0 ? 160 : 110, top + bottom + rows.length * rowHeight);
      const maxLabel = Math.max(8, ...allRows.map((r) => r.label.length + 2));
      const rich = Object.fromEntries(a.variants.map((_, vi) => [`m${vi}`, { color: variantStyle(vi).color, fontSize: 11 }]));
      const option: ChartOption = {
        animation: false,
        textStyle: { fontFamily: FONT },
        // a few columns keep a cell's width instead of stretching across the card
        grid: { left: Math.min(320, 16 + maxLabel * 6.6), ...(cols.length <= 6 ? { width: cols.length * 100 } : { right: 16 }), top, bottom, outerBoundsMode: 'none' },
        tooltip: {
          ...baseTooltip(),
          formatter: (raw: unknown) => {
            const p = raw as TooltipParams;
            const v = Array.isArray(p?.value) ? (p.value as unknown[]) : [];
            const row = rows[v[1] as number];
            return `<div style="font-weight:600">${esc(row?.label)}</div><div>${esc(cols[v[0] as number])}</div><div><b>${esc(v[4])}</b> · ${esc(v[5])}</div>`;
          },
        },
        // the first grid's save button sits beside its legend; the others are saved with the PNG button below them
        toolbox: i === 0 ? toolbox(fileBase) : undefined,
        xAxis: { type: 'category', data: cols, position: 'top', axisLabel: { color: AXIS_TEXT, interval: 0, fontSize: 11 }, axisTick: { show: false }, axisLine: { show: false }, splitArea: { show: false } },
        yAxis: {
          type: 'category',
          data: rows.map((r) => r.label),
          inverse: true,
          // each row led by its variant's marker in its color, as on the line charts
          axisLabel: {
            color: INK,
            fontSize: 11,
            rich,
            formatter: (value: string, index: number) => {
              const vi = variantIndex.get(rows[index]?.s.variantId ?? -1) ?? 0;
              return `{m${vi}|${GLYPH[variantStyle(vi).marker]}} ${value}`;
            },
          },
          axisTick: { show: false },
          axisLine: { show: false },
        },
        visualMap: {
          type: 'piecewise',
          show: i === 0,
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
            data: dataOf[k],
            label: { show: true, formatter: (p: unknown) => esc(((p as TooltipParams).value as unknown[])?.[3] ?? ''), fontSize: 11 },
            itemStyle: { borderColor: '#ffffff', borderWidth: 2, borderRadius: 3 },
            emphasis: { itemStyle: { borderColor: INK, borderWidth: 1 } },
          },
        ],
      };
      const title = both ? (k === 'time' ? 'Checkpoints in time' : 'Freeze-thaw cycles (the initial test is in the grid above)') : null;
      return { key: k, title, option, height, rows: rows.length, columns: cols };
    });

  return {
    attribute: attr,
    parts,
    csv: {
      fileName: `${fileBase}.csv`,
      header: ['Attribute', 'Sample', 'Variant', 'Lot', 'Condition', 'Checkpoint', 'Months', 'Level (0 = best)', 'Meaning', 'Verdict'],
      rows: csvRows,
    },
    rows: allRows.length,
    steps,
    failing,
    empty: dataOf.time.length + dataOf.cycles.length === 0,
  };
}
