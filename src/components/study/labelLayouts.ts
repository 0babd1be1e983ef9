/**
 * Label sheet layouts: paper, label size, grid and margins, in the sheet's own unit (mm or in) so
 * the browser's print lines up with die-cut label sheets. These are common layouts of the trade
 * (common practice, no published source); the lab checks one sheet on plain paper first.
 */
export type PaperId = 'a4' | 'letter';
export type LengthUnit = 'mm' | 'in';

export interface Paper {
  id: PaperId;
  label: string;
  /** CSS @page size keyword. */
  css: string;
  unit: LengthUnit;
  width: number;
  height: number;
}

export const PAPERS: Readonly<Record<PaperId, Paper>> = {
  a4: { id: 'a4', label: 'A4 (210 × 297 mm)', css: 'A4', unit: 'mm', width: 210, height: 297 },
  letter: { id: 'letter', label: 'US Letter (8.5 × 11 in)', css: 'letter', unit: 'in', width: 8.5, height: 11 },
};

export interface LabelLayout {
  id: string;
  paper: PaperId;
  /** Label width and height, in the paper's unit. */
  width: number;
  height: number;
  cols: number;
  rows: number;
  marginTop: number;
  marginLeft: number;
  /** Space between columns and between rows. */
  gapX: number;
  gapY: number;
  /** Padding inside a label, in the paper's unit. */
  padding: number;
  /** Side of the QR code (with its 2-module quiet zone), in the paper's unit. */
  qr: number;
  /** Font sizes, pt: the sample code and the other lines. */
  codePt: number;
  textPt: number;
}

export const LABEL_LAYOUTS: readonly LabelLayout[] = [
  { id: 'a4-21', paper: 'a4', width: 63.5, height: 38.1, cols: 3, rows: 7, marginTop: 15.15, marginLeft: 7.25, gapX: 2.5, gapY: 0, padding: 2.5, qr: 24, codePt: 14, textPt: 7.5 },
  { id: 'a4-24', paper: 'a4', width: 70, height: 37, cols: 3, rows: 8, marginTop: 0.5, marginLeft: 0, gapX: 0, gapY: 0, padding: 3, qr: 24, codePt: 14, textPt: 7.5 },
  { id: 'a4-14', paper: 'a4', width: 99.1, height: 38.1, cols: 2, rows: 7, marginTop: 15.15, marginLeft: 4.65, gapX: 2.5, gapY: 0, padding: 2.5, qr: 30, codePt: 16, textPt: 8.5 },
  { id: 'letter-30', paper: 'letter', width: 2.625, height: 1, cols: 3, rows: 10, marginTop: 0.5, marginLeft: 0.1875, gapX: 0.125, gapY: 0, padding: 0.06, qr: 0.86, codePt: 11, textPt: 6.5 },
  { id: 'letter-10', paper: 'letter', width: 4, height: 2, cols: 2, rows: 5, marginTop: 0.5, marginLeft: 0.15625, gapX: 0.1875, gapY: 0, padding: 0.12, qr: 1.5, codePt: 18, textPt: 9.5 },
];

const FRACTIONS: Record<string, string> = { '0.625': '⅝', '0.5': '½', '0.25': '¼', '0.75': '¾', '0.125': '⅛' };

/** A length as people write it: '63.5', '2⅝'. */
export function lengthText(x: number, unit: LengthUnit): string {
  if (unit === 'in') {
    const whole = Math.floor(x);
    const frac = FRACTIONS[String(Number((x - whole).toFixed(4)))];
    if (frac) return `${whole || ''}${frac}`;
  }
  return String(Number(x.toFixed(2)));
}

export function perSheet(l: LabelLayout): number {
  return l.cols * l.rows;
}

/** '63.5 × 38.1 mm, 21 per sheet (3 × 7)'. */
export function layoutLabel(l: LabelLayout): string {
  const unit = PAPERS[l.paper].unit;
  return `${lengthText(l.width, unit)} × ${lengthText(l.height, unit)} ${unit}, ${perSheet(l)} per sheet (${l.cols} × ${l.rows})`;
}

/** Right and bottom margins left over: both ≥ 0 when the layout fits its paper. */
export function leftover(l: LabelLayout): { right: number; bottom: number } {
  const p = PAPERS[l.paper];
  const right = p.width - l.marginLeft - l.cols * l.width - (l.cols - 1) * l.gapX;
  const bottom = p.height - l.marginTop - l.rows * l.height - (l.rows - 1) * l.gapY;
  return { right: Number(right.toFixed(6)), bottom: Number(bottom.toFixed(6)) };
}

/** Top-left corner of the label at `index` (0-based, row by row), in the paper's unit. */
export function labelPosition(l: LabelLayout, index: number): { left: number; top: number } {
  const col = index % l.cols;
  const row = Math.floor(index / l.cols) % l.rows;
  return {
    left: Number((l.marginLeft + col * (l.width + l.gapX)).toFixed(4)),
    top: Number((l.marginTop + row * (l.height + l.gapY)).toFixed(4)),
  };
}

/**
 * Splits labels into sheets. `skip` leaves the first positions of the first sheet empty (for a
 * sheet already partly used); empty positions are null.
 */
export function paginate<T>(labels: readonly T[], layout: LabelLayout, skip = 0): (T | null)[][] {
  const n = perSheet(layout);
  const s = Math.max(0, Math.min(n - 1, Math.floor(skip)));
  const cells: (T | null)[] = [...Array<null>(s).fill(null), ...labels];
  const sheets: (T | null)[][] = [];
  for (let i = 0; i < cells.length; i += n) sheets.push(cells.slice(i, i + n));
  return labels.length ? sheets : [];
}

/** Lines of text under the code on each label: condition (up to two), product and variant (what room is left), lot, start. */
export const LABEL_TEXT_LINES = 6;

/** Height the text block needs, pt: the code line (1.1 line height + 0.3 em space) and the other lines at 1.22. */
export function textHeightPt(l: LabelLayout): number {
  return l.codePt * 1.4 + LABEL_TEXT_LINES * l.textPt * 1.22;
}

/** A length in the paper's unit as points (72 per inch; 25.4 mm per inch). */
export function toPt(x: number, unit: LengthUnit): number {
  return unit === 'in' ? x * 72 : (x / 25.4) * 72;
}
