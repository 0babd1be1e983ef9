/**
 * The report's "Colour from photos" part: ΔE00 against the initial photo over months, a line per variant
 * and condition (means of the samples' photos at each checkpoint), with the method stated. Empty when the
 * study has no marked photos. ECharts renders the chart as SVG on the server (pdfmake draws it).
 */
import * as echarts from 'echarts';
import { DASHES, niceRange, tickText, variantStyle } from '../../../shared/chart-style';
import { DELTA_E_CLEARLY_VISIBLE } from '../../../shared/compute/photo-colour';
import type { StudyAnalysis } from '../../../shared/schemas/analysis';

const W = 500;
const H = 240;

export const PHOTO_COLOUR_METHOD =
  'Estimated from photos with a neutral reference card beside the jar: the marked regions are measured from the original pixels, ' +
  'linearised (sRGB, IEC 61966-2-1), corrected channel by channel against the card\'s known CIELAB (a diagonal white-balance ' +
  'correction, which does not correct uneven light, glare or metamerism), converted to CIELAB D65 (CIE 15) and compared with ' +
  'CIEDE2000 against the batch\'s initial photo. Values with a clipped, saturated, too small or uneven card region are withheld. ' +
  'An instrument (colorimeter) reading wins where both exist. The line at ΔE00 2 is a rule of thumb (common practice, no published source).';

export function photoColourSection(a: StudyAnalysis, h: (text: string) => unknown): unknown[] {
  const photo = a.deltaE.filter((d) => d.source === 'photo');
  if (!photo.length) return [];
  const series: object[] = [];
  let xMax = 0.5;
  let yMax = DELTA_E_CLEARLY_VISIBLE + 0.4;
  const legend: string[] = [];
  for (const [vi, v] of a.variants.entries()) {
    const st = variantStyle(vi);
    for (const [ci, c] of a.conditions.entries()) {
      const ds = photo.filter((d) => d.variantId === v.id && d.studyConditionId === c.id);
      if (!ds.length) continue;
      const by = new Map<number, number[]>();
      for (const p of ds.flatMap((d) => d.points)) if (p.de00 !== null) by.set(p.months, [...(by.get(p.months) ?? []), p.de00]);
      const data = [...by.entries()].sort((x, y) => x[0] - y[0]).map(([m, vs]) => [m, vs.reduce((s, x) => s + x, 0) / vs.length]);
      for (const [m, y] of data) {
        xMax = Math.max(xMax, m);
        yMax = Math.max(yMax, y);
      }
      const name = `${v.code} · ${c.name}`;
      legend.push(name);
      series.push({ type: 'line', name, data, color: st.color, symbol: st.symbol, symbolSize: 6, lineStyle: { width: 1.4, type: DASHES[ci % DASHES.length] } });
    }
  }
  const xr = niceRange(0, xMax, 6);
  const yr = niceRange(0, yMax, 5);
  const chart = echarts.init(null, null, { renderer: 'svg', ssr: true, width: W, height: H });
  chart.setOption({
    animation: false,
    textStyle: { fontFamily: 'Helvetica, Arial, sans-serif', fontSize: 10 },
    grid: { left: 40, right: 16, top: 24, bottom: 56 },
    legend: { bottom: 0, data: legend, textStyle: { fontSize: 9 } },
    xAxis: { type: 'value', name: 'Months', nameLocation: 'middle', nameGap: 22, min: 0, max: xr?.max, interval: xr?.step, axisLabel: { formatter: (x: number) => tickText(x, xr?.step ?? 1) } },
    yAxis: { type: 'value', name: 'Delta E00 (photo)', min: 0, max: yr?.max, interval: yr?.step, axisLabel: { formatter: (x: number) => tickText(x, yr?.step ?? 1) } },
    series: [
      ...series,
      { type: 'line', data: [], markLine: { silent: true, symbol: 'none', lineStyle: { color: '#666', type: 'dashed', width: 1 }, label: { formatter: 'Delta E00 2', fontSize: 9 }, data: [{ yAxis: DELTA_E_CLEARLY_VISIBLE }] } },
    ],
  });
  const svg = chart.renderToSVGString();
  chart.dispose();
  return [h('Colour from photos'), { svg, width: 360, margin: [0, 4, 0, 4] }, { text: PHOTO_COLOUR_METHOD, style: 'muted', margin: [0, 2, 0, 0] }];
}
