/**
 * Client formatters of the study pages: criteria in words, lab dates, checkpoint state lines,
 * the state palette's contrast, and label-sheet layouts.
 */
import { describe, expect, it } from 'vitest';
import { criterionText, formatDecimals, formatNumber } from '../../src/format/criterion';
import { formatDate, formatInstant, longDate, relativeDay, windowText } from '../../src/format/dates';
import { benchOrder, canMarkMissed, SHOWN_STATES, stateDetail } from '../../src/format/checkpoint';
import { STATE_STYLES } from '../../src/components/study/states';
import { LABEL_LAYOUTS, PAPERS, labelPosition, layoutLabel, leftover, paginate, perSheet, textHeightPt, toPt } from '../../src/components/study/labelLayouts';

describe('criterionText', () => {
  it('says each kind of criterion in plain words', () => {
    expect(criterionText({ kind: 'change_abs', max: 0.5 })).toBe('within ±0.5 of day 0');
    expect(criterionText({ kind: 'change_abs', max: 2 }, { unit: 'g' })).toBe('within ±2 g of day 0');
    expect(criterionText({ kind: 'change_pct', max: 20 }, { unit: 'mPa·s' })).toBe('within ±20 % of day 0');
    expect(criterionText({ kind: 'range', min: 5, max: 6.5 })).toBe('within 5–6.5');
    expect(criterionText({ kind: 'range', max: 2 })).toBe('at most 2');
    expect(criterionText({ kind: 'range', min: 0.1, max: null }, { unit: 'aw' })).toBe('at least 0.1 aw');
    expect(criterionText({ kind: 'worst_compared', level: 'slight' })).toBe('at worst slight change vs control');
    expect(criterionText({ kind: 'worst_compared', level: 'no_change' })).toBe('no change vs control');
    expect(criterionText({ kind: 'worst_grade', grade: 1 }, { scale: [{ grade: 0, label: 'none' }, { grade: 1, label: 'faint oil sheen' }] })).toBe(
      'at worst grade 1 (faint oil sheen)',
    );
    expect(criterionText({ kind: 'worst_grade', grade: 0 })).toBe('grade 0 only');
    expect(criterionText({ kind: 'must_pass' })).toBe('must pass');
    expect(criterionText({ kind: 'none' })).toBe('recorded only, no criterion');
    expect(criterionText(null)).toBe('No criterion');
  });

  it('is the one wording of the Attributes page, the plans, the Record screen and the PDF report (shared)', async () => {
    const shared = await import('../../shared/criterion-text');
    expect(criterionText).toBe(shared.criterionText);
  });

  it('writes numbers without float noise and with a true minus sign', () => {
    expect(formatNumber(0.1 + 0.2)).toBe('0.3');
    expect(formatNumber(-10)).toBe('−10');
    expect(criterionText({ kind: 'range', min: -10, max: 0 }, { unit: '°C' })).toBe('within −10–0 °C');
  });

  it('writes readings with at least their attribute decimals, never rounding away what was typed', () => {
    expect(formatDecimals(5.5, 2)).toBe('5.50');
    expect(formatDecimals(5.52, 2)).toBe('5.52');
    expect(formatDecimals(5.525, 2)).toBe('5.525');
    expect(formatDecimals(23810, 0)).toBe('23810');
    expect(formatDecimals(-0.5, 2)).toBe('−0.50');
    expect(formatDecimals(7, null)).toBe('7');
  });
});

describe('lab dates', () => {
  it('follows the lab date format', () => {
    expect(formatDate('2026-12-04', 'DD/MM/YYYY')).toBe('04/12/2026');
    expect(formatDate('2026-12-04', 'MM/DD/YYYY')).toBe('12/04/2026');
    expect(formatDate('2026-12-04', 'YYYY-MM-DD')).toBe('2026-12-04');
    expect(formatDate('2026-12-04', '')).toBe('2026-12-04');
    expect(windowText('2026-12-03', '2026-12-05', 'DD.MM.YYYY')).toBe('03.12.2026 – 05.12.2026');
    expect(windowText('2026-12-03', '2026-12-03')).toBe('2026-12-03');
  });

  it('spells out the weekday (1970-01-01 was a Thursday; 2026-12-14 is a Monday, from a calendar)', () => {
    expect(longDate('1970-01-01')).toBe('Thursday 1 January 1970');
    expect(longDate('2026-12-14')).toBe('Monday 14 December 2026');
  });

  it('counts days relative to today', () => {
    expect(relativeDay('2026-12-14', '2026-12-14')).toBe('today');
    expect(relativeDay('2026-12-15', '2026-12-14')).toBe('tomorrow');
    expect(relativeDay('2026-12-13', '2026-12-14')).toBe('yesterday');
    expect(relativeDay('2026-12-20', '2026-12-14')).toBe('in 6 days');
    expect(relativeDay('2026-12-01', '2026-12-14')).toBe('13 days ago');
  });

  it('shows a UTC instant in the lab zone (Europe/Berlin is UTC+1 in December, UTC+2 in July)', () => {
    expect(formatInstant('2026-12-14 23:30:00.000', 'Europe/Berlin', 'DD/MM/YYYY')).toBe('15/12/2026 00:30');
    expect(formatInstant('2026-07-01T08:00:00.000Z', 'Europe/Berlin')).toBe('2026-07-01 10:00');
    expect(formatInstant('2026-07-01T08:00:00.000Z', 'America/New_York')).toBe('2026-07-01 04:00');
  });
});

describe('checkpoint state lines', () => {
  const cp = (state: (typeof SHOWN_STATES)[number], dueDate: string, windowStart: string, windowEnd: string) => ({ state, dueDate, windowStart, windowEnd });

  it('says how late or how soon', () => {
    expect(stateDetail(cp('overdue', '2026-12-11', '2026-12-10', '2026-12-12'), '2026-12-14')).toBe('Overdue 3 days');
    expect(stateDetail(cp('overdue', '2026-12-12', '2026-12-12', '2026-12-13'), '2026-12-14')).toBe('Overdue 2 days');
    expect(stateDetail(cp('due', '2026-12-14', '2026-12-13', '2026-12-15'), '2026-12-14')).toBe('Due today');
    expect(stateDetail(cp('due', '2026-12-15', '2026-12-14', '2026-12-16'), '2026-12-14')).toBe('Due tomorrow, window open');
    expect(stateDetail(cp('due', '2026-12-13', '2026-12-12', '2026-12-14'), '2026-12-14')).toBe('Due yesterday, last day of the window');
    expect(stateDetail(cp('due', '2026-12-11', '2026-12-08', '2026-12-14'), '2026-12-12')).toBe('Due yesterday, window open 2 days more');
    expect(stateDetail(cp('upcoming', '2026-12-18', '2026-12-17', '2026-12-19'), '2026-12-14')).toBe('Due in 4 days');
  });

  it('allows marking missed only after the window has closed', () => {
    expect(canMarkMissed(cp('overdue', '2026-12-11', '2026-12-10', '2026-12-12'), '2026-12-14')).toBe(true);
    expect(canMarkMissed(cp('due', '2026-12-13', '2026-12-12', '2026-12-14'), '2026-12-14')).toBe(false);
    expect(canMarkMissed(cp('done', '2026-12-01', '2026-12-01', '2026-12-02'), '2026-12-14')).toBe(false);
  });

  it('orders bench work: overdue, due, upcoming, earliest first', () => {
    const items = [
      { state: 'upcoming' as const, dueDate: '2026-12-16' },
      { state: 'due' as const, dueDate: '2026-12-15' },
      { state: 'overdue' as const, dueDate: '2026-12-10' },
      { state: 'due' as const, dueDate: '2026-12-14' },
      { state: 'overdue' as const, dueDate: '2026-12-08' },
    ];
    expect([...items].sort(benchOrder).map((i) => `${i.state} ${i.dueDate}`)).toEqual([
      'overdue 2026-12-08',
      'overdue 2026-12-10',
      'due 2026-12-14',
      'due 2026-12-15',
      'upcoming 2026-12-16',
    ]);
  });
});

/**
 * WCAG 2.1, definitions of "relative luminance" and "contrast ratio", and SC 1.4.3 (AA: at least
 * 4.5:1 for normal text). The formula below is the one the definitions give (from memory);
 * checks: black on white is 21:1, and #767676 on white is the often-quoted 4.54:1 (from memory).
 */
function luminance(hex: string): number {
  const v = hex.replace('#', '');
  const [r, g, b] = [0, 2, 4].map((i) => {
    const c = parseInt(v.slice(i, i + 2), 16) / 255;
    return c <= 0.03928 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  });
  return 0.2126 * r + 0.7152 * g + 0.0722 * b;
}
function contrast(a: string, b: string): number {
  const [hi, lo] = [luminance(a), luminance(b)].sort((x, y) => y - x);
  return (hi + 0.05) / (lo + 0.05);
}

describe('state palette (WCAG 2.1 AA)', () => {
  it('computes contrast as WCAG defines it', () => {
    expect(contrast('#000000', '#ffffff')).toBeCloseTo(21, 6);
    expect(contrast('#767676', '#ffffff')).toBeCloseTo(4.54, 2);
  });

  it('gives every state text of at least 4.5:1 on its fill, and on white for the outlined ones', () => {
    const ratios: Record<string, number> = {};
    for (const s of SHOWN_STATES) {
      const st = STATE_STYLES[s];
      ratios[s] = Number(contrast(st.fg, st.bg).toFixed(2));
      expect(ratios[s], s).toBeGreaterThanOrEqual(4.5);
    }
    // Overdue is the only solid strong fill: its fill against the white page is above 3:1 (SC 1.4.11).
    expect(contrast(STATE_STYLES.overdue.bg, '#ffffff')).toBeGreaterThan(3);
    console.info('state text contrast', ratios);
  });

  it('gives every state its own icon (never color alone)', () => {
    const icons = SHOWN_STATES.map((s) => STATE_STYLES[s].icon);
    expect(new Set(icons).size).toBe(SHOWN_STATES.length);
  });
});

describe('label layouts (common practice, no published source)', () => {
  it('fit their paper with equal left and right margins', () => {
    for (const l of LABEL_LAYOUTS) {
      const { right, bottom } = leftover(l);
      expect(right, l.id).toBeGreaterThanOrEqual(0);
      expect(bottom, l.id).toBeGreaterThanOrEqual(0);
      expect(right, `${l.id} symmetric`).toBeCloseTo(l.marginLeft, 6);
      expect(bottom, `${l.id} symmetric`).toBeCloseTo(l.marginTop, 6);
    }
  });

  it('leave room for the QR code and the text block inside the padding', () => {
    for (const l of LABEL_LAYOUTS) {
      const unit = PAPERS[l.paper].unit;
      const inner = toPt(l.height - 2 * l.padding, unit);
      expect(l.qr, l.id).toBeLessThanOrEqual(l.height - 2 * l.padding);
      expect(textHeightPt(l), l.id).toBeLessThanOrEqual(inner);
      // The text column keeps at least 30 mm beside the QR code.
      const textWidthMm = ((l.width - 2 * l.padding - l.qr - l.padding) * (unit === 'in' ? 25.4 : 1));
      expect(textWidthMm, l.id).toBeGreaterThanOrEqual(30);
    }
  });

  it('offer at least three sizes, on A4 and US Letter, with the counts people know', () => {
    expect(LABEL_LAYOUTS.length).toBeGreaterThanOrEqual(3);
    expect(new Set(LABEL_LAYOUTS.map((l) => l.paper))).toEqual(new Set(['a4', 'letter']));
    const byId = Object.fromEntries(LABEL_LAYOUTS.map((l) => [l.id, l]));
    expect(perSheet(byId['a4-21'])).toBe(21);
    expect(perSheet(byId['a4-24'])).toBe(24);
    expect(perSheet(byId['letter-30'])).toBe(30);
    expect(layoutLabel(byId['a4-21'])).toBe('63.5 × 38.1 mm, 21 per sheet (3 × 7)');
    expect(layoutLabel(byId['letter-30'])).toBe('2⅝ × 1 in, 30 per sheet (3 × 10)');
    expect(PAPERS.letter.width * 25.4).toBeCloseTo(215.9, 6);
  });

  it('places labels row by row and splits them into sheets, skipping used positions', () => {
    const l = LABEL_LAYOUTS.find((x) => x.id === 'a4-21')!;
    expect(labelPosition(l, 0)).toEqual({ left: 7.25, top: 15.15 });
    expect(labelPosition(l, 4)).toEqual({ left: 73.25, top: 53.25 });
    expect(labelPosition(l, 20)).toEqual({ left: 139.25, top: 243.75 });
    const labels = Array.from({ length: 25 }, (_, i) => i);
    const sheets = paginate(labels, l, 3);
    expect(sheets.map((s) => s.length)).toEqual([21, 7]);
    expect(sheets[0].slice(0, 4)).toEqual([null, null, null, 0]);
    expect(paginate([], l)).toEqual([]);
  });
});
