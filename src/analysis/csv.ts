/**
 * CSV text for a chart's data, built in the browser: the shared cell writer (`@shared/csv`:
 * RFC 4180 quoting, numbers plain, text formulas defused), CRLF line ends and a UTF-8
 * byte-order mark so spreadsheet programs read °C and ΔE correctly. Pure; the download
 * itself is in the component.
 */
import { csvCell } from '@shared/csv';

export type CsvCell = string | number | boolean | null | undefined;

const cell = (v: CsvCell): string => csvCell(v);

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
