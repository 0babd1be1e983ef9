/**
 * How every chart of a study looks, on screen (src/analysis/) and in the PDF report
 * (server/services/report.ts): one color, marker and dash per variant in the study's order, so a
 * variant looks the same on every chart; round axis ranges and ticks; limit values at the
 * precision used; and which axis a condition is drawn on (months, cycles or checkpoints).
 * Pure; no I/O.
 */
/**
 * Variant colors: the Okabe-Ito palette (M. Okabe and K. Ito, "Color Universal Design (CUD): how to
 * make figures and presentations that are friendly to colorblind people", 2008), which readers with
 * any common color-vision deficiency can tell apart. Contrast on white (WCAG 2.1 relative luminance,
 * at least 3:1 for graphics): blue 5.2, vermillion 3.9, bluish green 3.4, reddish purple 3.1, black 21.
 * Orange, sky blue and yellow fall below 3:1 as published (2.3, 2.3, 1.3), so they are darkened
 * here (3.8, 3.8, 4.4). A marker shape of its own goes with each color, so color is never alone.
 */
export const VARIANT_COLORS = ['#0072B2', '#D55E00', '#009E73', '#CC79A7', '#000000', '#B07800', '#3B8AC0', '#857A00'] as const;

export type MarkerShape = 'circle' | 'square' | 'triangle' | 'diamond' | 'triangleDown' | 'ring' | 'squareOpen' | 'triangleOpen';
export const VARIANT_MARKERS: readonly MarkerShape[] = ['circle', 'square', 'triangle', 'diamond', 'triangleDown', 'ring', 'squareOpen', 'triangleOpen'];

export type DashStyle = 'solid' | number[];
/** Line patterns that survive black-and-white printing (dash lengths in px). */
export const DASHES: readonly DashStyle[] = ['solid', [7, 3], [2, 2], [9, 3, 2, 3], [12, 4], [4, 2, 1, 2], [1, 3], [6, 2, 2, 2, 2, 2]];

/** ECharts symbol of each marker shape. */
export const ECHARTS_SYMBOL: Readonly<Record<MarkerShape, string>> = {
  circle: 'circle',
  square: 'rect',
  triangle: 'triangle',
  diamond: 'diamond',
  triangleDown: 'path://M0,0 L10,0 L5,9 Z',
  ring: 'emptyCircle',
  squareOpen: 'emptyRect',
  triangleOpen: 'emptyTriangle',
};

export interface VariantStyle {
  color: string;
  marker: MarkerShape;
  /** ECharts symbol name or path. */
  symbol: string;
  dash: DashStyle;
}

/** The style of the variant at this place in the study's order (0 first), the same on every chart. */
export function variantStyle(index: number): VariantStyle {
  const i = Number.isInteger(index) && index >= 0 ? index : 0;
  const marker = VARIANT_MARKERS[i % VARIANT_MARKERS.length];
  return { color: VARIANT_COLORS[i % VARIANT_COLORS.length], marker, symbol: ECHARTS_SYMBOL[marker], dash: DASHES[i % DASHES.length] };
}

/** An SVG element drawing a marker centred on (x, y), `size` px across. */
export function markerSvg(shape: MarkerShape, x: number, y: number, size: number, color: string): string {
  const r = size / 2;
  const f = (n: number) => Number(n.toFixed(2));
  const open = shape === 'ring' || shape === 'squareOpen' || shape === 'triangleOpen';
  const paint = open ? `fill="#ffffff" stroke="${color}" stroke-width="1.5"` : `fill="${color}"`;
  switch (shape) {
    case 'circle':
    case 'ring':
      return `<circle cx="${f(x)}" cy="${f(y)}" r="${f(open ? r - 0.75 : r)}" ${paint}/>`;
    case 'square':
    case 'squareOpen': {
      const s = open ? size - 1.5 : size * 0.9;
      return `<rect x="${f(x - s / 2)}" y="${f(y - s / 2)}" width="${f(s)}" height="${f(s)}" ${paint}/>`;
    }
    case 'triangle':
    case 'triangleOpen':
      return `<path d="M${f(x)},${f(y - r)} L${f(x + r)},${f(y + r * 0.8)} L${f(x - r)},${f(y + r * 0.8)} Z" ${paint}/>`;
    case 'triangleDown':
      return `<path d="M${f(x - r)},${f(y - r * 0.8)} L${f(x + r)},${f(y - r * 0.8)} L${f(x)},${f(y + r)} Z" ${paint}/>`;
    case 'diamond':
      return `<path d="M${f(x)},${f(y - r)} L${f(x + r * 0.8)},${f(y)} L${f(x)},${f(y + r)} L${f(x - r * 0.8)},${f(y)} Z" ${paint}/>`;
  }
}

/** SVG stroke-dasharray of a dash style ('' for solid). */
export function dashArray(d: DashStyle): string {
  return d === 'solid' ? '' : d.join(' ');
}

// ------------------------------------------------------------------------------------------ axes

const isNum = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);

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

/** Decimals a tick step needs (0.5 -> 1, 0.05 -> 2, 2000 -> 0). */
export function stepDecimals(step: number): number {
  if (!isNum(step) || step <= 0) return 0;
  return Math.min(10, Math.max(0, Math.ceil(-Math.log10(step) - 1e-9)));
}

/** A tick label at the step's decimals, with a true minus sign ("5.5", "28,000", "−0.2"). */
export function tickText(x: number, step: number): string {
  if (!isNum(x)) return '';
  const d = stepDecimals(step);
  const v = Number(x.toFixed(d));
  const s = Math.abs(v) >= 10_000 ? v.toLocaleString('en-GB', { minimumFractionDigits: d, maximumFractionDigits: d }) : v.toFixed(d);
  return s === '-0' || /^-0\.0*$/.test(s) ? s.slice(1) : s.replace(/^-/, '−');
}

// ------------------------------------------------------------------------------------------ limits

/**
 * A limit at the precision the engine uses: its written decimals when that is exact (95.0, 5.00),
 * else every digit it has (a limit computed from a mean, 4.985, is never shown as 4.99), as
 * shared/compute/shelf-life.ts writes it in its messages.
 */
export function limitShown(x: number, decimals?: number | null): string {
  if (!isNum(x)) return '';
  // limitValueText of shelf-life.ts, written out so that the client's chart code does not pull in the engine
  const s = decimals != null && Number.isInteger(decimals) && decimals >= 0 && decimals <= 12 && Number(x.toFixed(decimals)) === x ? x.toFixed(decimals) : String(Math.round(x * 1e10) / 1e10);
  return s.startsWith('-') ? `−${s.slice(1)}` : s;
}

export interface LimitLine {
  side: 'lower' | 'upper';
  value: number;
  text: string;
  /** Variants (by id) whose limit this is; every variant shown when it is all of them. */
  variantIds: number[];
}

/**
 * One line per distinct limit value: variants that share a limit share its line and its label.
 * `shared` is true when every variant given has the same lower and the same upper limit.
 */
export function limitLines(
  limits: readonly { variantId: number; limit: { lower?: number | null; upper?: number | null; decimals?: number | null } }[],
): { lines: LimitLine[]; shared: boolean } {
  const lines: LimitLine[] = [];
  for (const side of ['lower', 'upper'] as const) {
    for (const l of limits) {
      const v = l.limit[side];
      if (!isNum(v)) continue;
      const same = lines.find((x) => x.side === side && Math.abs(x.value - v) <= 1e-9 * Math.max(1, Math.abs(v)));
      if (same) {
        if (!same.variantIds.includes(l.variantId)) same.variantIds.push(l.variantId);
      } else {
        lines.push({ side, value: v, text: limitShown(v, l.limit.decimals), variantIds: [l.variantId] });
      }
    }
  }
  const ids = new Set(limits.map((l) => l.variantId));
  const sides = (['lower', 'upper'] as const).filter((s) => limits.some((l) => isNum(l.limit[s])));
  const shared =
    limits.length > 0 &&
    sides.every((s) => lines.filter((x) => x.side === s).length === 1 && lines.find((x) => x.side === s)!.variantIds.length === ids.size);
  return { lines, shared };
}

// ------------------------------------------------------------------------------------------ conditions

/** The x axis of a condition: months (stored at a temperature), cycles (freeze-thaw) or checkpoints. */
export type AxisKind = 'months' | 'cycles' | 'checkpoints';

export function axisKindOf(c: { kind: string }): AxisKind {
  return c.kind === 'constant' ? 'months' : c.kind === 'cycling' ? 'cycles' : 'checkpoints';
}

/** The cycle number of a checkpoint label ("Cycle 3" -> 3); 0 for the initial test; null otherwise. */
export function cycleOf(label: string, months?: number): number | null {
  const m = /^cycle\s+(\d+)$/i.exec(label.trim());
  if (m) return Number(m[1]);
  if (/^(initial|day 0)$/i.test(label.trim()) || (isNum(months) && Math.abs(months) < 1e-9)) return 0;
  return null;
}

/** Whether a checkpoint label counts cycles. */
export const isCycleLabel = (label: string) => /^cycle\s+\d+$/i.test(label.trim());
