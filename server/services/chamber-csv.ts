/**
 * Reads chamber-logger CSV exports as a stream: the layout (encoding, delimiter, header row,
 * columns, unit, date order) is found from the first 64 KB, then the rows stream through
 * csv-parse and come out in batches of readings in °C with UTC times.
 *
 * What it reads:
 * - a header row (up to 50 lines of logger preamble may come first) naming a time column
 *   ("Time", "Date/Time", "Timestamp", or separate "Date" and "Time" columns), a temperature column
 *   ("Temp (°C)", "Temperature °F", "Celsius(°C)") and optionally an RH column ("RH", "Humidity (%rh)");
 *   dew point and other columns are ignored;
 * - comma, semicolon or tab delimiters (semicolon and tab files may use decimal commas);
 * - °C or °F from the header, else from the caller (form field `unit`);
 * - ISO 8601 with or without T, seconds, fraction, Z or offset; YYYY/MM/DD; DD/MM/YYYY or MM/DD/YYYY
 *   (two-digit years as 20yy; AM/PM allowed), decided from the file when a day above 12 shows it,
 *   else by the caller's `dateOrder` (default DMY); DD.MM.YYYY. Times without an offset are in the
 *   lab's time zone. Years 1900 to 2199 only.
 * The preamble and the header row are skipped before csv-parse sees the rows, so a quote mark in a
 * logger's preamble ('Serial: "EL-USB-2"') is just text.
 * Rows must be in time order (equal times allowed): logger exports are, so a row that goes back in
 * time means a wrong date order or a spliced file, and is refused with its line number.
 * Any bad row stops the read with a CsvProblem naming the line.
 */
import { Readable, pipeline } from 'node:stream';
import { CsvError, parse } from 'csv-parse';
import { fahrenheitToCelsius } from '../../shared/compute/units';
import { MAX_READING_C, MIN_READING_C } from '../../shared/schemas/storage';
import { daysInMonth, ZoneClock } from '../../shared/zoned-time';

export type TempUnit = 'C' | 'F';
export type DateOrder = 'DMY' | 'MDY';

/** A problem with the file (or with the unit or date order chosen for it): answered as 400. */
export class CsvProblem extends Error {
  constructor(
    message: string,
    readonly field: 'file' | 'unit' | 'dateOrder' = 'file',
    readonly line?: number,
  ) {
    super(message);
  }
}

/** The file does not look like text at all: answered as 415. */
export class NotText extends Error {}

/** Bytes looked at to decide encoding, delimiter and header. */
export const SNIFF_BYTES = 64 * 1024;
const MAX_PREAMBLE_LINES = 50;

/**
 * Decides whether the first bytes of a file look like text: no NUL byte, few control characters,
 * and valid UTF-8 (a sequence cut at the end of the sample is fine) or else Latin-1.
 */
export function sniffText(head: Uint8Array): 'utf8' | 'latin1' {
  if (head.indexOf(0) !== -1) throw new NotText('The file contains NUL bytes: it is not a CSV text file');
  let control = 0;
  for (const b of head) if (b < 0x20 && b !== 0x09 && b !== 0x0a && b !== 0x0d) control++;
  if (control > Math.max(8, head.length / 100)) throw new NotText('The file contains binary data: it is not a CSV text file');
  try {
    new TextDecoder('utf-8', { fatal: true }).decode(head, { stream: true });
    return 'utf8';
  } catch {
    return 'latin1';
  }
}

export interface CsvColumns {
  /** Column holding date and time together, or null when date and time are separate. */
  at: number | null;
  date: number | null;
  time: number | null;
  temp: number;
  rh: number | null;
}

export interface CsvLayout {
  encoding: 'utf8' | 'latin1';
  delimiter: ',' | ';' | '\t';
  /** 1-based line of the header row. */
  headerLine: number;
  headers: string[];
  columns: CsvColumns;
  unit: TempUnit;
  unitFrom: 'header' | 'form';
  decimalComma: boolean;
  dateOrder: DateOrder;
  dateOrderFrom: 'file' | 'form' | 'default';
}

export interface LayoutOptions {
  unit?: TempUnit;
  dateOrder?: DateOrder;
}

const DELIMITER_NAMES: Record<string, string> = { ',': 'commas', ';': 'semicolons', '\t': 'tabs' };

function normHeader(s: string): string {
  return s.replace(/^\uFEFF/, '').replace(/["']/g, '').replace(/\s+/g, ' ').trim().toLowerCase();
}

type HeaderKind = 'datetime' | 'date' | 'time' | 'temp' | 'rh' | null;

function classify(h: string): HeaderKind {
  if (!h) return null;
  if (/dew|frost|heat ?index|wet ?bulb/.test(h)) return null;
  const date = /date|datum|fecha/.test(h);
  const time = /time|zeit|hora|heure/.test(h);
  if (/timestamp|time ?stamp|zeitstempel|datetime/.test(h) || (date && time)) return 'datetime';
  if (/(^|[^a-z])(rh|r\.h\.)([^a-z]|$)|humid|feuchte|%\s*rh/.test(h)) return 'rh';
  if (/temp|celsius|fahrenheit|°\s*[cf]|℃|℉|(^|[^a-z])deg\.?\s*[cf]([^a-z]|$)/.test(h)) return 'temp';
  if (date) return 'date';
  if (time) return 'time';
  return null;
}

/** The unit a temperature header names: C, F, 'other' (e.g. kelvin), or null when it names none. */
export function headerUnit(h: string): TempUnit | 'other' | null {
  const s = normHeader(h);
  if (/°\s*c|℃|celsius|(^|[^a-z])deg\.?\s*c([^a-z]|$)|[([]\s*c\s*[)\]]|(^|\s)c$/.test(s)) return 'C';
  if (/°\s*f|℉|fahrenheit|(^|[^a-z])deg\.?\s*f([^a-z]|$)|[([]\s*f\s*[)\]]|(^|\s)f$/.test(s)) return 'F';
  if (/kelvin|°\s*k|[([]\s*k\s*[)\]]|°\s*r|rankine|réaumur/.test(s)) return 'other';
  return null;
}

/** Splits one sample line on a delimiter, honouring double quotes (good enough to sniff). */
function splitLine(line: string, delimiter: string): string[] {
  const out: string[] = [];
  let cur = '';
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const ch = line[i];
    if (ch === '"') {
      if (quoted && line[i + 1] === '"') {
        cur += '"';
        i++;
      } else quoted = !quoted;
    } else if (ch === delimiter && !quoted) {
      out.push(cur);
      cur = '';
    } else cur += ch;
  }
  out.push(cur);
  return out;
}

function countOutsideQuotes(line: string, ch: string): number {
  let n = 0;
  let quoted = false;
  for (const c of line) {
    if (c === '"') quoted = !quoted;
    else if (c === ch && !quoted) n++;
  }
  return n;
}

interface HeaderMatch {
  columns: CsvColumns;
  headers: string[];
}

function matchHeader(cells: string[]): HeaderMatch | null {
  const kinds = cells.map((c) => classify(normHeader(c)));
  const first = (k: HeaderKind) => {
    const i = kinds.indexOf(k);
    return i === -1 ? null : i;
  };
  const temp = first('temp');
  if (temp === null) return null;
  const dt = first('datetime');
  const date = first('date');
  const time = first('time');
  let columns: CsvColumns;
  if (dt !== null) columns = { at: dt, date: null, time: null, temp, rh: first('rh') };
  else if (date !== null && time !== null) columns = { at: null, date, time, temp, rh: first('rh') };
  else if (time !== null || date !== null) columns = { at: (time ?? date) as number, date: null, time: null, temp, rh: first('rh') };
  else return null;
  return { columns, headers: cells.map((c) => c.replace(/^\uFEFF/, '').trim()) };
}

/**
 * Finds the layout of a logger CSV from its first bytes (up to 64 KB). Throws NotText when the
 * bytes are not text, CsvProblem when no header row is found or the unit is unknown.
 */
export function detectLayout(head: Buffer, opts: LayoutOptions = {}): CsvLayout {
  if (head.length === 0) throw new CsvProblem('The file is empty');
  const encoding = sniffText(head);
  let text = head.toString(encoding).replace(/^\uFEFF/, '');
  // The sample may end in the middle of a line: drop that part unless the whole file fits.
  const cut = head.length >= SNIFF_BYTES ? Math.max(text.lastIndexOf('\n'), 0) : text.length;
  text = text.slice(0, cut);
  const lines = text.split(/\r\n|\n|\r/);

  let headerIndex = -1;
  let delimiter: CsvLayout['delimiter'] = ',';
  let match: HeaderMatch | null = null;
  for (let i = 0; i < Math.min(lines.length, MAX_PREAMBLE_LINES); i++) {
    const line = lines[i];
    if (!line.trim()) continue;
    const candidates = (['\t', ';', ','] as const)
      .map((d) => ({ d, n: countOutsideQuotes(line, d) }))
      .filter((c) => c.n > 0)
      .sort((a, b) => b.n - a.n);
    for (const { d } of candidates) {
      const m = matchHeader(splitLine(line, d));
      if (m) {
        match = m;
        delimiter = d;
        break;
      }
    }
    if (match) {
      headerIndex = i;
      break;
    }
  }
  if (!match) {
    if (lines.every((l) => !l.trim())) throw new CsvProblem('The file is empty');
    throw new CsvProblem(
      'No header row found: the file needs a time column (e.g. "Timestamp" or "Date/Time") and a temperature column (e.g. "Temp (°C)"), separated by commas or semicolons',
    );
  }

  const tempHeader = match.headers[match.columns.temp];
  const fromHeader = headerUnit(tempHeader);
  let unit: TempUnit;
  let unitFrom: CsvLayout['unitFrom'];
  if (fromHeader === 'other') {
    throw new CsvProblem(`The temperature column "${tempHeader}" is in a unit this app does not read: use °C or °F`, 'unit');
  } else if (fromHeader) {
    unit = fromHeader;
    unitFrom = 'header';
  } else if (opts.unit) {
    unit = opts.unit;
    unitFrom = 'form';
  } else {
    throw new CsvProblem(`The header "${tempHeader}" does not say °C or °F: choose the unit`, 'unit');
  }

  // Date order: evidence from the sample rows (a first or second number above 12) beats the form.
  let dmy = false;
  let mdy = false;
  const { at, date } = match.columns;
  const dateCol = at ?? date;
  for (let i = headerIndex + 1; i < lines.length && i < headerIndex + 5000; i++) {
    if (!lines[i].trim()) continue;
    const cells = splitLine(lines[i], delimiter);
    const v = (cells[dateCol as number] ?? '').trim();
    const m = /^(\d{1,2})[/-](\d{1,2})[/-]\d{2,4}/.exec(v);
    if (!m) continue;
    if (Number(m[1]) > 12) dmy = true;
    if (Number(m[2]) > 12) mdy = true;
  }
  let dateOrder: DateOrder;
  let dateOrderFrom: CsvLayout['dateOrderFrom'];
  if (dmy !== mdy) {
    dateOrder = dmy ? 'DMY' : 'MDY';
    dateOrderFrom = 'file';
  } else if (opts.dateOrder) {
    dateOrder = opts.dateOrder;
    dateOrderFrom = 'form';
  } else {
    dateOrder = 'DMY';
    dateOrderFrom = 'default';
  }

  return {
    encoding,
    delimiter,
    headerLine: headerIndex + 1,
    headers: match.headers,
    columns: match.columns,
    unit,
    unitFrom,
    decimalComma: delimiter !== ',',
    dateOrder,
    dateOrderFrom,
  };
}

/** A wall-clock or absolute time read from a cell. */
export interface ReadTime {
  /** Epoch ms: absolute when `zoned` is false, else the wall-clock time written as if UTC. */
  ms: number;
  zoned: boolean;
}

const ISO_RE =
  /^(\d{4})[-/](\d{1,2})[-/](\d{1,2})(?:(?:T|\s+)(\d{1,2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?\s*(?:([AaPp])\.?[Mm]\.?)?\s*(Z|[+-]\d{2}(?::?\d{2})?)?)?$/;
const DAY_FIRST_RE =
  /^(\d{1,2})([/.-])(\d{1,2})\2(\d{4}|\d{2})(?:(?:T|\s+|,\s*)(\d{1,2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?\s*(?:([AaPp])\.?[Mm]\.?)?)?$/;

/** Years a reading may carry (the app's date range). */
const MIN_YEAR = 1900;
const MAX_YEAR = 2199;

const FORMAT_HINT = 'e.g. 2026-03-25 14:00, 2026-03-25T14:00:00Z, 25/03/2026 14:00 or 25.03.2026 14:00';

/** Reads one timestamp cell; returns a message when it is not a time this module reads. */
export function readTimestamp(text: string, order: DateOrder): ReadTime | string {
  const s = text.trim();
  let y: number, mo: number, d: number;
  let hh = '0', mi = '0', ss = '0', frac = '', ampm: string | undefined, zone: string | undefined;
  let m = ISO_RE.exec(s);
  let orderName = 'YYYY-MM-DD';
  if (m) {
    y = Number(m[1]);
    mo = Number(m[2]);
    d = Number(m[3]);
    [hh = '0', mi = '0', ss = '0', frac = ''] = [m[4], m[5], m[6], m[7]];
    ampm = m[8];
    zone = m[9];
  } else if ((m = DAY_FIRST_RE.exec(s))) {
    const a = Number(m[1]);
    const b = Number(m[3]);
    const dotted = m[2] === '.';
    const dayFirst = dotted || order === 'DMY';
    orderName = dotted ? 'DD.MM.YYYY' : dayFirst ? 'DD/MM/YYYY' : 'MM/DD/YYYY';
    d = dayFirst ? a : b;
    mo = dayFirst ? b : a;
    y = m[4].length === 2 ? 2000 + Number(m[4]) : Number(m[4]);
    [hh = '0', mi = '0', ss = '0', frac = ''] = [m[5], m[6], m[7], m[8]];
    ampm = m[9];
    if (mo > 12 && !dotted) {
      const other = dayFirst ? 'MM/DD/YYYY' : 'DD/MM/YYYY';
      return `'${clip(s)}' is not a valid ${orderName} date; if the file writes the ${dayFirst ? 'month' : 'day'} first, choose the date order ${other}`;
    }
  } else {
    return `time '${clip(s)}' is not a date and time this app reads (${FORMAT_HINT})`;
  }
  if (mo < 1 || mo > 12 || d < 1 || d > daysInMonth(y, mo)) return `'${clip(s)}' is not a valid ${orderName} date`;
  // Date.UTC would read years 0-99 as 1900-1999, and a time after 9999 does not fit the database.
  if (y < MIN_YEAR || y > MAX_YEAR) return `'${clip(s)}' is outside the years ${MIN_YEAR} to ${MAX_YEAR}`;
  let hour = Number(hh);
  if (ampm) {
    if (hour < 1 || hour > 12) return `'${clip(s)}' has hour ${hour} with AM/PM`;
    hour = (hour % 12) + (/p/i.test(ampm) ? 12 : 0);
  }
  const minute = Number(mi);
  const second = Number(ss);
  if (hour > 23 || minute > 59 || second > 59) return `'${clip(s)}' is not a valid time of day`;
  const ms = frac ? Math.round(Number(`0.${frac}`) * 1000) : 0;
  let t = Date.UTC(y, mo - 1, d, hour, minute, second, ms);
  if (zone === undefined) return { ms: t, zoned: true };
  if (zone.toUpperCase() !== 'Z') {
    const sign = zone[0] === '-' ? -1 : 1;
    const digits = zone.slice(1).replace(':', '');
    const oh = Number(digits.slice(0, 2));
    const om = Number(digits.slice(2, 4) || '0');
    if (oh > 14 || om > 59) return `'${clip(s)}' has an impossible UTC offset`;
    t -= sign * (oh * 60 + om) * 60_000;
  }
  return { ms: t, zoned: false };
}

const NUMBER_RE = /^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$/;

/** Reads a number cell (decimal point, or decimal comma); NaN when it is not one. */
export function readNumber(text: string): number {
  if (!NUMBER_RE.test(text)) return NaN;
  return Number(text.indexOf(',') === -1 ? text : text.replace(',', '.'));
}

/** csv-parse's error codes (some written with "CSV_", some without), in words. */
const CSV_ERRORS: Record<string, string> = {
  INVALID_CLOSING_QUOTE: 'a quote mark in the middle of a field (quotes inside a field must be doubled)',
  QUOTE_NOT_CLOSED: 'a quote mark opened on this line or above is never closed',
  MAX_RECORD_SIZE: 'the line is too long to be a logger reading',
  INVALID_OPENING_QUOTE: 'a quote mark in the middle of a field',
  NON_TRIMABLE_CHAR_AFTER_CLOSING_QUOTE: 'text after a closing quote mark',
  RECORD_INCONSISTENT_FIELDS_LENGTH: 'the number of columns differs from the header',
};

/**
 * The file from the line after its header row: preamble and header are dropped byte by byte (line
 * breaks LF, CRLF or CR, counted as detectLayout counts them), so csv-parse never reads them.
 */
async function* afterHeader(input: AsyncIterable<Buffer | string>, lines: number): AsyncGenerator<Buffer | string> {
  let toSkip = lines;
  let pendingCr = false;
  for await (const chunk of input) {
    if (toSkip === 0 && !pendingCr) {
      yield chunk;
      continue;
    }
    const at = (i: number) => (typeof chunk === 'string' ? chunk.charCodeAt(i) : chunk[i]);
    let i = 0;
    if (pendingCr && chunk.length) {
      pendingCr = false;
      if (at(0) === 0x0a) i = 1;
    }
    while (toSkip > 0 && i < chunk.length) {
      const c = at(i++);
      if (c === 0x0a) toSkip--;
      else if (c === 0x0d) {
        toSkip--;
        if (i < chunk.length) {
          if (at(i) === 0x0a) i++;
        } else pendingCr = true;
      }
    }
    if (i < chunk.length) yield typeof chunk === 'string' ? chunk.slice(i) : chunk.subarray(i);
  }
}

const LINE_BREAK_IN_QUOTES = 'a line break inside quotes (a logger reading fits on one line)';

function problemAt(line: number, message: string): CsvProblem {
  return new CsvProblem(`line ${line}: ${message}`, 'file', line);
}

function clip(s: string, n = 40): string {
  // eslint-disable-next-line no-control-regex
  const clean = s.replace(/[\u0000-\u001f\u007f]/g, '?');
  return clean.length > n ? `${clean.slice(0, n)}…` : clean;
}

export interface ParsedReading {
  /** UTC, epoch ms. */
  at: number;
  tempC: number;
  rh: number | null;
  /** 1-based line in the file. */
  line: number;
}

export interface ReadOptions {
  /** IANA zone for times written without an offset (the lab's). */
  timeZone: string;
  /** Readings per yielded batch. */
  batchSize?: number;
}

/**
 * Streams the readings of a logger CSV in batches, in file order. `input` is the whole file
 * (header and preamble included) as a byte stream; `layout` comes from detectLayout on its start.
 * Throws CsvProblem (with the line) on the first bad row; the caller stores nothing then.
 */
export async function* readChamberCsv(
  input: Readable | AsyncIterable<Buffer | string>,
  layout: CsvLayout,
  opts: ReadOptions,
): AsyncGenerator<ParsedReading[]> {
  const batchSize = opts.batchSize ?? 5000;
  const clock = new ZoneClock(opts.timeZone);
  const { columns, unit, dateOrder } = layout;
  const need = Math.max(columns.at ?? -1, columns.date ?? -1, columns.time ?? -1, columns.temp, columns.rh ?? -1) + 1;
  const unitLabel = unit === 'F' ? '°F' : '°C';

  const parser = parse({
    bom: true,
    encoding: layout.encoding,
    delimiter: layout.delimiter,
    skip_empty_lines: false,
    relax_column_count: true,
    trim: true,
    max_record_size: 64 * 1024,
  });
  const source = Readable.from(afterHeader(input, layout.headerLine));
  // Errors of the source reach the parser, and so the loop below; leaving the loop destroys both.
  pipeline(source, parser, () => {});

  let batch: ParsedReading[] = [];
  let prevAt = -Infinity;
  let prevLine = 0;
  let prevText = '';
  let prevSkipped = false;
  // Empty lines are kept as records so that line numbers can be counted without csv-parse's
  // per-record info objects (3x slower); a line break inside quotes is refused, so the count holds.
  let line = layout.headerLine;
  try {
    for await (const record of parser as AsyncIterable<string[]>) {
      line++;
      if (record.length === 1 && record[0] === '') continue;
      if (record.length < need) {
        throw problemAt(line, `expected at least ${need} columns separated by ${DELIMITER_NAMES[layout.delimiter]}, found ${record.length}`);
      }
      const timeText = columns.at !== null ? record[columns.at] : `${record[columns.date as number]} ${record[columns.time as number]}`;
      if (!timeText.trim()) throw problemAt(line, 'the time is empty');
      const read = readTimestamp(timeText, dateOrder);
      if (typeof read === 'string') throw problemAt(line, read);

      const tempText = record[columns.temp];
      if (tempText === '') throw problemAt(line, 'the temperature is empty');
      const raw = readNumber(tempText);
      if (Number.isNaN(raw)) {
        throw problemAt(line, /[\r\n]/.test(tempText) ? LINE_BREAK_IN_QUOTES : `temperature '${clip(tempText)}' is not a number`);
      }
      const tempC = unit === 'F' ? fahrenheitToCelsius(raw) : raw;
      if (!(tempC >= MIN_READING_C && tempC <= MAX_READING_C)) {
        throw problemAt(line, `temperature ${tempText} ${unitLabel} is outside ${MIN_READING_C} to ${MAX_READING_C} °C (a sensor error code?)`);
      }

      let rh: number | null = null;
      if (columns.rh !== null) {
        const rhText = record[columns.rh] ?? '';
        if (rhText !== '') {
          rh = readNumber(rhText);
          if (Number.isNaN(rh)) {
            throw problemAt(line, /[\r\n]/.test(rhText) ? LINE_BREAK_IN_QUOTES : `relative humidity '${clip(rhText)}' is not a number`);
          }
          if (rh < 0 || rh > 100) throw problemAt(line, `relative humidity ${rhText} % is outside 0 to 100 %`);
        }
      }

      let at = read.ms;
      let skipped = false;
      if (read.zoned && !clock.utc) {
        const c = clock.instantsOf(read.ms);
        at = c.kind === 'repeated' && c.earlier < prevAt && c.later >= prevAt ? c.later : c.earlier;
        skipped = c.kind === 'skipped';
      }
      if (at < prevAt) {
        const hint = prevSkipped
          ? `'${clip(prevText)}' does not exist in ${opts.timeZone} (clocks went forward that night), so the logger does not follow daylight-saving time: export the times in UTC or with a UTC offset`
          : 'readings must be in time order, as loggers export them (check the date order)';
        throw problemAt(line, `time '${clip(timeText)}' is earlier than '${clip(prevText)}' on line ${prevLine}; ${hint}`);
      }
      prevAt = at;
      prevLine = line;
      prevText = timeText;
      prevSkipped = skipped;
      batch.push({ at, tempC, rh, line });
      if (batch.length >= batchSize) {
        yield batch;
        batch = [];
      }
    }
  } catch (err) {
    if (err instanceof CsvProblem) throw err;
    if (err instanceof CsvError) {
      // csv-parse counts lines from the first row after the header.
      const e = err as CsvError & { lines?: number };
      const line = typeof e.lines === 'number' ? e.lines + layout.headerLine : undefined;
      const what = CSV_ERRORS[String(e.code).replace(/^CSV_/, '')] ?? (e.message.split(':')[0] || 'unreadable CSV').toLowerCase();
      throw new CsvProblem(`${line ? `line ${line}: ` : ''}${what}`, 'file', line);
    }
    throw err;
  } finally {
    parser.destroy();
  }
  if (batch.length) yield batch;
}
