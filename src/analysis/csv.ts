/**
 * CSV text for a chart's data, built in the browser (RFC 4180 quoting, CRLF line ends, a UTF-8
 * byte-order mark so spreadsheet programs read °C and ΔE correctly). Text cells that a
 * spreadsheet would run as a formula (=, +, -, @ first) get a leading apostrophe; numbers are
 * written as plain numbers with a dot. Pure; the download itself is in the component.
 */

export type CsvCell = string | number | boolean | null | undefined;

const FORMULA = /^[=+\-@\t\r]/;

function cell(v: CsvCell): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(Number(v.toPrecision(15))) : '';
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  let s = v;
  if (FORMULA.test(s)) s = `'${s}`;
  return /[",\r\n;]/.test(s) || s !== s.trim() ? `"${s.replace(/"/g, '""')}"` : s;
}

/** The CSV text of a header row and data rows. */
export function toCsv(header: readonly string[], rows: readonly (readonly CsvCell[])[]): string {
  const lines = [header.map(cell).join(','), ...rows.map((r) => r.map(cell).join(','))];
  return `\uFEFF${lines.join('\r\n')}\r\n`;
}

/** A chart's data as CSV, ready to download. */
export interface CsvFile {
  fileName: string;
  header: string[];
  rows: CsvCell[][];
}
