import { Readable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import {
  CsvProblem,
  NotText,
  detectLayout,
  headerUnit,
  readChamberCsv,
  readNumber,
  readTimestamp,
  sniffText,
  type LayoutOptions,
  type ParsedReading,
} from '../../server/services/chamber-csv';
import { ZoneClock, formatWallClock, parsePeriodBound } from '../../shared/zoned-time';

/** Parses a whole CSV text the way the upload route does (layout from the head, then the stream). */
async function readAll(
  text: string | Buffer,
  opts: LayoutOptions & { timeZone?: string; chunk?: number } = {},
): Promise<ParsedReading[]> {
  const bytes = typeof text === 'string' ? Buffer.from(text, 'utf8') : text;
  const layout = detectLayout(bytes.subarray(0, 65536), opts);
  const chunk = opts.chunk ?? 7; // tiny chunks: rows and multi-byte characters split across them
  const parts: Buffer[] = [];
  for (let i = 0; i < bytes.length; i += chunk) parts.push(bytes.subarray(i, i + chunk));
  const out: ParsedReading[] = [];
  for await (const batch of readChamberCsv(Readable.from(parts), layout, { timeZone: opts.timeZone ?? 'UTC', batchSize: 3 })) {
    out.push(...batch);
  }
  return out;
}

async function problemOf(text: string, opts: LayoutOptions & { timeZone?: string } = {}): Promise<CsvProblem> {
  try {
    await readAll(text, opts);
  } catch (e) {
    if (e instanceof CsvProblem) return e;
    throw e;
  }
  throw new Error('expected a CsvProblem');
}

const iso = (ms: number) => new Date(ms).toISOString();

describe('sniffing text', () => {
  it('takes UTF-8, falls back to Latin-1, refuses NUL bytes and binary', () => {
    expect(sniffText(Buffer.from('Temp (°C)\n', 'utf8'))).toBe('utf8');
    expect(sniffText(Buffer.from('Temp (°C)\n', 'latin1'))).toBe('latin1');
    // A UTF-8 sequence cut at the end of the sample is still UTF-8.
    expect(sniffText(Buffer.from('Temp (°C)', 'utf8').subarray(0, 7))).toBe('utf8');
    expect(() => sniffText(Buffer.from([0x54, 0x00, 0x41]))).toThrow(NotText);
    const binary = Buffer.alloc(1000, 0x01);
    expect(() => sniffText(binary)).toThrow(NotText);
  });
});

describe('header detection', () => {
  it.each([
    ['Time,Temp (°C),RH', { at: 0, temp: 1, rh: 2 }, 'C'],
    ['"Date/Time","Temperature °F","Humidity (%rh)"', { at: 0, temp: 1, rh: 2 }, 'F'],
    ['Timestamp;Celsius(°C)', { at: 0, temp: 1, rh: null }, 'C'],
    ['No.,Time,Celsius(°C),Humidity(%rh),Dew Point(°C),Serial Number', { at: 1, temp: 2, rh: 3 }, 'C'],
    ['Date,Time,Temperature (C)', { at: null, date: 0, time: 1, temp: 2 }, 'C'],
  ])('%s', (header, cols, unit) => {
    const layout = detectLayout(Buffer.from(`${header}\n2026-01-05 08:00${header.includes(';') ? ';' : ','}21\n`));
    expect(layout.columns).toMatchObject(cols);
    expect(layout.unit).toBe(unit);
    expect(layout.unitFrom).toBe('header');
  });

  it('skips a logger preamble before the header', () => {
    const layout = detectLayout(Buffer.from('Logger: cabinet 2\nSerial: 12345\n\nTime,Temp (°C)\n2026-01-05 08:00,21\n'));
    expect(layout.headerLine).toBe(4);
  });

  it('reads the unit from the header, else the form, else refuses naming `unit`', () => {
    expect(headerUnit('Temp (°C)')).toBe('C');
    expect(headerUnit('Temperature °F')).toBe('F');
    expect(headerUnit('Celsius(°C)')).toBe('C');
    expect(headerUnit('Temperature [F]')).toBe('F');
    expect(headerUnit('Temp (K)')).toBe('other');
    expect(headerUnit('Temperature')).toBeNull();
    expect(detectLayout(Buffer.from('Time,Temperature\n'), { unit: 'F' })).toMatchObject({ unit: 'F', unitFrom: 'form' });
    const missing = (() => {
      try {
        detectLayout(Buffer.from('Time,Temperature\n'));
      } catch (e) {
        return e as CsvProblem;
      }
    })();
    expect(missing).toBeInstanceOf(CsvProblem);
    expect(missing?.field).toBe('unit');
    expect(() => detectLayout(Buffer.from('Time,Temp (K)\n'))).toThrow(/unit/);
  });

  it('refuses a file without a usable header', () => {
    expect(() => detectLayout(Buffer.from('2026-01-05 08:00,21\n'))).toThrow(/No header row/);
    expect(() => detectLayout(Buffer.from(''))).toThrow(/empty/);
    expect(() => detectLayout(Buffer.from('\n\n'))).toThrow(/empty/);
  });
});

describe('timestamps', () => {
  const at = (s: string, order: 'DMY' | 'MDY' = 'DMY') => {
    const r = readTimestamp(s, order);
    if (typeof r === 'string') throw new Error(r);
    return r;
  };
  it('reads ISO 8601 with and without T, seconds, fraction, Z or offset', () => {
    expect(at('2026-03-25T14:00:00Z')).toEqual({ ms: Date.UTC(2026, 2, 25, 14), zoned: false });
    expect(at('2026-03-25T14:00:00.250+01:00')).toEqual({ ms: Date.UTC(2026, 2, 25, 13, 0, 0, 250), zoned: false });
    expect(at('2026-03-25 14:00+0530').ms).toBe(Date.UTC(2026, 2, 25, 8, 30));
    expect(at('2026-03-25 14:00')).toEqual({ ms: Date.UTC(2026, 2, 25, 14), zoned: true });
    expect(at('2026-03-25 14:00:07').ms).toBe(Date.UTC(2026, 2, 25, 14, 0, 7));
    expect(at('2026/03/25 14:00').ms).toBe(Date.UTC(2026, 2, 25, 14));
  });
  it('reads day-first and month-first dates by the date order, and dotted dates as day-first', () => {
    expect(at('05/03/2026 14:00').ms).toBe(Date.UTC(2026, 2, 5, 14));
    expect(at('05/03/2026 14:00', 'MDY').ms).toBe(Date.UTC(2026, 4, 3, 14));
    expect(at('25.03.2026 14:00').ms).toBe(Date.UTC(2026, 2, 25, 14));
    expect(at('25.03.2026 14:00', 'MDY').ms).toBe(Date.UTC(2026, 2, 25, 14));
    expect(at('03/25/26 02:15:00 PM', 'MDY').ms).toBe(Date.UTC(2026, 2, 25, 14, 15));
    expect(at('03/25/2026 12:05 AM', 'MDY').ms).toBe(Date.UTC(2026, 2, 25, 0, 5));
  });
  it('explains what is wrong', () => {
    expect(readTimestamp('03/25/2026 14:00', 'DMY')).toMatch(/not a valid DD\/MM\/YYYY date.*MM\/DD\/YYYY/);
    expect(readTimestamp('2026-02-30 10:00', 'DMY')).toMatch(/not a valid YYYY-MM-DD date/);
    expect(readTimestamp('2026-02-03 25:00', 'DMY')).toMatch(/time of day/);
    expect(readTimestamp('yesterday', 'DMY')).toMatch(/not a date and time/);
  });
});

describe('numbers', () => {
  it('reads decimal points and decimal commas, and nothing else', () => {
    expect(readNumber('21.5')).toBe(21.5);
    expect(readNumber('21,5')).toBe(21.5);
    expect(readNumber('-3')).toBe(-3);
    expect(readNumber('.5')).toBe(0.5);
    for (const bad of ['', 'abc', '0x10', 'Infinity', '21.5°C', '1.2.3']) expect(readNumber(bad)).toBeNaN();
  });
});

describe('reading a log', () => {
  it('reads comma files, with RH, into UTC readings', async () => {
    const rows = await readAll('Time,Temp (°C),RH\n2026-01-05 08:00,21.5,45\n2026-01-05 08:01,21.6,\n\n2026-01-05 08:02,21.7,46\n');
    expect(rows.map((r) => [iso(r.at), r.tempC, r.rh, r.line])).toEqual([
      ['2026-01-05T08:00:00.000Z', 21.5, 45, 2],
      ['2026-01-05T08:01:00.000Z', 21.6, null, 3],
      ['2026-01-05T08:02:00.000Z', 21.7, 46, 5],
    ]);
  });

  it('reads semicolon files with decimal commas and day-first dates', async () => {
    const rows = await readAll('Datum/Zeit;Temperatur (°C);Feuchte (%rH)\n05.01.2026 08:00;21,5;45,5\n05.01.2026 08:05;"21,75";46\n');
    expect(rows.map((r) => [iso(r.at), r.tempC, r.rh])).toEqual([
      ['2026-01-05T08:00:00.000Z', 21.5, 45.5],
      ['2026-01-05T08:05:00.000Z', 21.75, 46],
    ]);
  });

  it('converts °F to °C by (F - 32) / 1.8', async () => {
    // NIST SP 811 (2008), Appendix B.8 (from memory): t/°C = (t/°F - 32)/1.8; 113 °F = 45 °C, 32 °F = 0 °C.
    const rows = await readAll('Date/Time,Temperature °F\n2026-01-05 08:00,113\n2026-01-05 08:01,32\n');
    expect(rows.map((r) => r.tempC)).toEqual([45, 0]);
  });

  it('reads Latin-1 files (° as byte 0xB0)', async () => {
    const rows = await readAll(Buffer.from('Time;Temp (°C)\n2026-01-05 08:00;4,5\n', 'latin1'));
    expect(rows.map((r) => r.tempC)).toEqual([4.5]);
  });

  it('decides the date order from a day above 12 in the file, else the form, else DMY', async () => {
    const mdy = 'Time,Temp (°C)\n01/12/2026 08:00,20\n01/13/2026 08:00,20\n';
    expect(detectLayout(Buffer.from(mdy))).toMatchObject({ dateOrder: 'MDY', dateOrderFrom: 'file' });
    expect(detectLayout(Buffer.from(mdy), { dateOrder: 'DMY' })).toMatchObject({ dateOrder: 'MDY', dateOrderFrom: 'file' });
    const ambiguous = 'Time,Temp (°C)\n01/02/2026 08:00,20\n';
    expect(detectLayout(Buffer.from(ambiguous))).toMatchObject({ dateOrder: 'DMY', dateOrderFrom: 'default' });
    expect(detectLayout(Buffer.from(ambiguous), { dateOrder: 'MDY' })).toMatchObject({ dateOrder: 'MDY', dateOrderFrom: 'form' });
    expect((await readAll(ambiguous, { dateOrder: 'MDY' }))[0].at).toBe(Date.UTC(2026, 0, 2, 8));
    expect((await readAll(ambiguous))[0].at).toBe(Date.UTC(2026, 1, 1, 8));
  });

  it('combines separate date and time columns', async () => {
    const rows = await readAll('Date,Time,Temp (°C)\n2026-01-05,08:00:00,20\n2026-01-05,08:10:00,20.5\n');
    expect(rows.map((r) => iso(r.at))).toEqual(['2026-01-05T08:00:00.000Z', '2026-01-05T08:10:00.000Z']);
  });

  it("puts times without an offset in the lab's zone, through both daylight-saving changes", async () => {
    // Europe/Berlin: CET (UTC+1) in winter; clocks go forward 2026-03-29 02:00 -> 03:00 and back
    // 2026-10-25 03:00 -> 02:00 (EU summer-time rule, Directive 2000/84/EC, from memory).
    const winter = await readAll('Time,Temp (°C)\n2026-01-05 08:00,20\n', { timeZone: 'Europe/Berlin' });
    expect(iso(winter[0].at)).toBe('2026-01-05T07:00:00.000Z');
    const autumn = await readAll(
      'Time,Temp (°C)\n2026-10-25 01:30,20\n2026-10-25 02:00,20\n2026-10-25 02:30,20\n2026-10-25 02:00,20\n2026-10-25 02:30,20\n2026-10-25 03:00,20\n',
      { timeZone: 'Europe/Berlin' },
    );
    // A logger writing local time repeats 02:00-02:59: first in summer time, then in winter time.
    expect(autumn.map((r) => iso(r.at).slice(11, 16))).toEqual(['23:30', '00:00', '00:30', '01:00', '01:30', '02:00']);
    const spring = await readAll('Time,Temp (°C)\n2026-03-29 01:30,20\n2026-03-29 02:30,20\n2026-03-29 03:30,20\n', {
      timeZone: 'Europe/Berlin',
    });
    // 02:30 does not exist that night: read as 03:30 CEST (the RFC 5545 / Temporal 'compatible' choice).
    expect(spring.map((r) => iso(r.at).slice(11, 16))).toEqual(['00:30', '01:30', '01:30']);
    // Times with an offset ignore the lab's zone.
    const explicit = await readAll('Time,Temp (°C)\n2026-01-05T08:00:00Z,20\n', { timeZone: 'Europe/Berlin' });
    expect(iso(explicit[0].at)).toBe('2026-01-05T08:00:00.000Z');
  });

  it('names the line and what is wrong', async () => {
    const head = 'Time,Temp (°C),RH\n';
    const ok = (i: number) => `2026-01-05 08:${String(i).padStart(2, '0')},21,40\n`;
    let text = head;
    for (let i = 0; i < 20; i++) text += ok(i);
    const bad = `${text}2026-01-05 08:20,abc,40\n${ok(21)}`;
    const p = await problemOf(bad);
    expect(p.message).toBe("line 22: temperature 'abc' is not a number");
    expect(p.line).toBe(22);
    expect((await problemOf(`${head}2026-01-05 08:00\n`)).message).toBe('line 2: expected at least 3 columns separated by commas, found 1');
    expect((await problemOf(`${head}2026-01-05 08:00,,40\n`)).message).toBe('line 2: the temperature is empty');
    expect((await problemOf(`${head}2026-01-05 08:00,21,140\n`)).message).toMatch(/^line 2: relative humidity 140 % is outside/);
    expect((await problemOf(`${head}2026-01-05 08:00,-999,40\n`)).message).toMatch(/^line 2: temperature -999 °C is outside/);
    expect((await problemOf(`${head}soon,21,40\n`)).message).toMatch(/^line 2: time 'soon' is not a date and time/);
    expect((await problemOf(`${head}2026-01-05 08:00,"21,40\n`)).message).toMatch(/^line \d+: a quote mark/);
  });

  it('refuses readings out of time order, naming both lines', async () => {
    const p = await problemOf('Time,Temp (°C)\n2026-01-05 08:00,20\n2026-01-05 08:10,20\n2026-01-05 08:05,20\n');
    expect(p.line).toBe(4);
    expect(p.message).toMatch(/^line 4: time '2026-01-05 08:05' is earlier than '2026-01-05 08:10' on line 3/);
    // Equal times are allowed.
    expect(await readAll('Time,Temp (°C)\n2026-01-05 08:00,20\n2026-01-05 08:00,21\n')).toHaveLength(2);
  });

  it('catches a month-first file read day-first once a day above 12 appears after the sample', async () => {
    // One reading a minute from 1 January, written MM/DD/YYYY: the first 64 KB only hold days 1-2,
    // which read either way, so the default DMY applies until "01/13/2026" cannot be a DD/MM date.
    const pad = (n: number) => String(n).padStart(2, '0');
    let text = 'Time,Temp (°C)\n';
    let line = 1;
    let badLine = 0;
    for (let day = 1; day <= 13; day++) {
      for (let minute = 0; minute < 1440; minute++) {
        line++;
        if (day === 13 && !badLine) badLine = line;
        text += `01/${pad(day)}/2026 ${pad(Math.floor(minute / 60))}:${pad(minute % 60)},20\n`;
      }
    }
    expect(detectLayout(Buffer.from(text).subarray(0, 65536))).toMatchObject({ dateOrder: 'DMY', dateOrderFrom: 'default' });
    let problem: CsvProblem | undefined;
    try {
      await readAll(text, { chunk: 65536 });
    } catch (e) {
      problem = e as CsvProblem;
    }
    expect(problem).toBeInstanceOf(CsvProblem);
    expect(problem?.line).toBe(badLine);
    expect(problem?.message).toBe(
      `line ${badLine}: '01/13/2026 00:00' is not a valid DD/MM/YYYY date; if the file writes the month first, choose the date order MM/DD/YYYY`,
    );
    // Chosen explicitly, the same file reads.
    const rows = await readAll(text, { chunk: 65536, dateOrder: 'MDY' });
    expect(rows).toHaveLength(13 * 1440);
    expect(rows[rows.length - 1].at).toBe(Date.UTC(2026, 0, 13, 23, 59));
  }, 30_000);
});

describe('years, preambles and quote marks', () => {
  it('refuses years outside 1900..2199 (Date.UTC would read 0001 as 1901; 10000 does not fit the database)', () => {
    expect(readTimestamp('0001-03-25 14:00', 'DMY')).toMatch(/outside the years 1900 to 2199/);
    expect(readTimestamp('25/03/0001 14:00', 'DMY')).toMatch(/outside the years 1900 to 2199/);
    expect(readTimestamp('1899-12-31 23:59', 'DMY')).toMatch(/outside the years 1900 to 2199/);
    expect(readTimestamp('2200-01-01 00:00', 'DMY')).toMatch(/outside the years 1900 to 2199/);
    expect(readTimestamp('1900-01-01 00:00', 'DMY')).toEqual({ ms: Date.UTC(1900, 0, 1), zoned: true });
    expect(readTimestamp('2199-12-31 23:59Z', 'DMY')).toEqual({ ms: Date.UTC(2199, 11, 31, 23, 59), zoned: false });
  });

  it('skips a preamble with quote marks, whatever the line breaks and however the bytes are split', async () => {
    for (const nl of ['\n', '\r\n', '\r']) {
      const text = ['Logger "EL-USB-2" export', 'Serial: 12"34', 'Title,"unclosed', 'Timestamp,Temp (°C)', '2026-03-25T14:00:00Z,21.5', '2026-03-25T14:05:00Z,21.6', ''].join(nl);
      for (const chunk of [1, 2, 3, 7, 65536]) {
        const rows = await readAll(text, { chunk });
        expect(rows.map((r) => [r.line, r.tempC]), `${JSON.stringify(nl)} in chunks of ${chunk}`).toEqual([
          [5, 21.5],
          [6, 21.6],
        ]);
      }
    }
  });

  it('names the line of a quote mark in a reading, counted from the top of the file', async () => {
    const problem = await problemOf('Exported by logger\nTimestamp,Temp (°C)\n2026-03-25T14:00:00Z,21.5\n2026-03-25T14:05:00Z,2"1.6\n');
    expect(problem.message).toBe('line 4: a quote mark in the middle of a field');
    const opening = await problemOf('Exported by logger\nTimestamp,Temp (°C)\n2026-03-25T14:00:00Z,21.5\n2026-03-25T14:05:00Z,x"y\n');
    expect(opening.message).toMatch(/^line 4: a quote mark/);
  });
});

describe('zoned time helpers', () => {
  it('formats and parses period bounds in the lab zone', () => {
    expect(formatWallClock(Date.UTC(2026, 6, 1, 10), 'Europe/Berlin')).toBe('2026-07-01 12:00');
    expect(parsePeriodBound('2026-07-01T12:00', 'Europe/Berlin')).toBe(Date.UTC(2026, 6, 1, 10));
    expect(parsePeriodBound('2026-07-01', 'Europe/Berlin')).toBe(Date.UTC(2026, 5, 30, 22));
    expect(parsePeriodBound('2026-07-01T12:00:00Z', 'Europe/Berlin')).toBe(Date.UTC(2026, 6, 1, 12));
    expect(parsePeriodBound('2026-07-01T12:00:00-04:00', 'Europe/Berlin')).toBe(Date.UTC(2026, 6, 1, 16));
    expect(parsePeriodBound('2026-13-01', 'UTC')).toBeNull();
    expect(parsePeriodBound('soon', 'UTC')).toBeNull();
  });
  it('finds both instants of a repeated hour and none of a skipped one', () => {
    const c = new ZoneClock('America/New_York');
    // US rule (Energy Policy Act of 2005, from memory): back on 2026-11-01 02:00 EDT -> 01:00 EST.
    expect(c.instantsOf(Date.UTC(2026, 10, 1, 1, 30))).toEqual({
      earlier: Date.UTC(2026, 10, 1, 5, 30),
      later: Date.UTC(2026, 10, 1, 6, 30),
      kind: 'repeated',
    });
    expect(c.instantsOf(Date.UTC(2026, 2, 8, 2, 30)).kind).toBe('skipped');
    expect(() => new ZoneClock('Mars/Olympus')).toThrow(RangeError);
  });
});
