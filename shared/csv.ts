/**
 * One CSV cell writer for every export, server and browser alike (RFC 4180 quoting, CRLF line
 * ends). Numbers are written as plain numbers with a dot, never guarded, so -1.5 stays -1.5.
 * Text that a spreadsheet would run as a formula (=, +, -, @, tab or CR first) gets a leading
 * apostrophe (the OWASP "CSV Injection" advice). Objects are written as JSON text.
 */

const FORMULA = /^[=+\-@\t\r]/;

/** One cell: numbers plain, text guarded against formulas, quoted when needed. */
export function csvCell(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(Number(v.toPrecision(15))) : '';
  if (typeof v === 'bigint') return String(v);
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  let s = typeof v === 'string' ? v : v instanceof Date ? v.toISOString() : (JSON.stringify(v) ?? String(v));
  if (FORMULA.test(s)) s = `'${s}`;
  return /[",\r\n;]/.test(s) || s !== s.trim() ? `"${s.replace(/"/g, '""')}"` : s;
}

/** One line of cells, ending in CRLF. */
export function csvLine(cells: readonly unknown[]): string {
  return `${cells.map(csvCell).join(',')}\r\n`;
}
