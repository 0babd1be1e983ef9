/**
 * Chamber logs: importing a logger CSV (streamed, summarized as it goes, inserted in committed chunks
 * under an import id), and reading stored readings back for a period (summary, chart series, CSV).
 */
import { createReadStream } from 'node:fs';
import { and, eq, sql } from 'drizzle-orm';
import {
  ChamberSummaryAccumulator,
  DEFAULT_RH_TOLERANCE,
  DEFAULT_TOLERANCE_C,
  downsampleMinMax,
  type ChamberSummary,
  type ChamberSummaryOptions,
  type SeriesPoint,
} from '../../shared/compute/storage';
import {
  MAX_LISTED_EXCURSIONS,
  type ChamberLogListItem,
  type ChamberLogMeta,
  type ExcursionOut,
  type LogSource,
  type LogSummary,
  type SeriesOut,
  type ToleranceBand,
} from '../../shared/schemas/storage';
import type { Db, DbOrTx } from '../db/client';
import { chamberLogs, storageConditions } from '../db/schema';
import { HttpError } from '../http/errors';
import { bulkPoolOf } from '../db/bulk';
import { audit } from './audit';
import { CsvProblem, readChamberCsv, type CsvLayout } from './chamber-csv';
import { HourlyRollups, summarizeFromRollups, writeRollups } from './chamber-rollups';

/** Readings per multi-row INSERT. */
export const INSERT_BATCH = 5000;
/**
 * INSERTs per committed chunk: 25 000 rows, a small write set (well under a Galera node's
 * wsrep_max_ws_rows of 200 000 in tests/cluster) with a fifth of the commits of one per INSERT.
 */
export const BATCHES_PER_COMMIT = 5;
/** Readings fetched per query when reading a log back. */
const FETCH_CHUNK = 25_000;
/** Chart series keep at most twice this many points. */
export const CHART_BUCKETS = 1000;

type ConditionRow = typeof storageConditions.$inferSelect;
type LogRow = typeof chamberLogs.$inferSelect;

/** What a condition's logs are judged against (a cycling condition: its low-high envelope). */
export function bandFor(c: Pick<ConditionRow, 'kind' | 'setpointC' | 'toleranceC' | 'rhPercent' | 'toleranceRh' | 'lowC' | 'highC'>): ToleranceBand {
  const toleranceC = c.toleranceC ?? DEFAULT_TOLERANCE_C;
  if (c.kind === 'constant' && c.setpointC != null) {
    const rh = c.rhPercent ?? null;
    return {
      rule: 'setpoint',
      setpointC: c.setpointC,
      toleranceC,
      lowC: null,
      highC: null,
      rhSetpoint: rh,
      rhTolerance: rh == null ? null : (c.toleranceRh ?? DEFAULT_RH_TOLERANCE),
    };
  }
  if (c.kind === 'cycling' && c.lowC != null && c.highC != null) {
    return { rule: 'cycle', setpointC: null, toleranceC, lowC: c.lowC, highC: c.highC, rhSetpoint: null, rhTolerance: null };
  }
  return { rule: 'none', setpointC: null, toleranceC: null, lowC: null, highC: null, rhSetpoint: null, rhTolerance: null };
}

/** Accumulator options for a band: a cycle is judged as its envelope [low - tol, high + tol]. */
export function accumulatorOptions(band: ToleranceBand, from?: number | null, to?: number | null): ChamberSummaryOptions {
  const period = { from: from ?? null, to: to ?? null };
  if (band.rule === 'setpoint') {
    return {
      setpointC: band.setpointC as number,
      toleranceC: band.toleranceC ?? DEFAULT_TOLERANCE_C,
      rhSetpoint: band.rhSetpoint,
      rhTolerance: band.rhTolerance ?? DEFAULT_RH_TOLERANCE,
      ...period,
    };
  }
  if (band.rule === 'cycle') {
    const low = band.lowC as number;
    const high = band.highC as number;
    return { setpointC: (low + high) / 2, toleranceC: (high - low) / 2 + (band.toleranceC ?? DEFAULT_TOLERANCE_C), ...period };
  }
  return { setpointC: 0, toleranceC: Infinity, ...period };
}

const isoOrNull = (ms: number | null) => (ms == null ? null : new Date(ms).toISOString());

function excursionsOut<T extends { start: number; end: number; hours: number; ongoing: boolean }>(
  list: T[],
  peak: (e: T) => number,
): ExcursionOut[] {
  return list.slice(0, MAX_LISTED_EXCURSIONS).map((e) => ({
    start: new Date(e.start).toISOString(),
    end: new Date(e.end).toISOString(),
    hours: e.hours,
    ongoing: e.ongoing,
    peak: peak(e),
  }));
}

/** The API's summary of an accumulator result. */
export function toLogSummary(r: ChamberSummary, band: ToleranceBand, source?: LogSource): LogSummary {
  const judged = band.rule !== 'none';
  return {
    count: r.count,
    first: isoOrNull(r.first),
    last: isoOrNull(r.last),
    minC: r.minC,
    maxC: r.maxC,
    meanC: r.meanC,
    mktC: r.mktC,
    spanHours: r.spanHours,
    largestGapHours: r.largestGapHours,
    hoursOutOfTolerance: judged ? r.hoursOutOfTolerance : null,
    excursionCount: judged ? r.excursions.length : 0,
    excursions: judged ? excursionsOut(r.excursions, (e) => e.peakC) : [],
    rh: r.rh
      ? {
          count: r.rh.count,
          min: r.rh.min,
          max: r.rh.max,
          mean: r.rh.mean,
          hoursOutOfTolerance: r.rh.hoursOutOfTolerance,
          excursionCount: r.rh.excursions.length,
          excursions: excursionsOut(r.rh.excursions, (e) => e.peakRh),
        }
      : null,
    band,
    ...(source ? { source } : {}),
  };
}

const DAY_MS = 86_400_000;
const p2 = (n: number) => (n < 10 ? `0${n}` : `${n}`);
const p3 = (n: number) => (n < 10 ? `00${n}` : n < 100 ? `0${n}` : `${n}`);

/**
 * A fast 'YYYY-MM-DD HH:MM:SS.mmm' formatter of UTC instants (a DATETIME(3) literal), or with
 * `iso` 'YYYY-MM-DDTHH:MM:SS.mmmZ': the date part is cached per day, so a year of minute readings
 * formats without a Date per row.
 */
export function utcFormatter(iso = false): (ms: number) => string {
  let day = NaN;
  let prefix = '';
  const sep = iso ? 'T' : ' ';
  const suffix = iso ? 'Z' : '';
  return (ms: number) => {
    const d = Math.floor(ms / DAY_MS);
    if (d !== day) {
      day = d;
      prefix = new Date(d * DAY_MS).toISOString().slice(0, 10) + sep;
    }
    let rest = ms - d * DAY_MS;
    const h = Math.floor(rest / 3_600_000);
    rest -= h * 3_600_000;
    const m = Math.floor(rest / 60_000);
    rest -= m * 60_000;
    const s = Math.floor(rest / 1000);
    return `${prefix}${p2(h)}:${p2(m)}:${p2(s)}.${p3(rest - s * 1000)}${suffix}`;
  };
}

const sqlTime = utcFormatter();

/** One multi-row INSERT of readings. Every value is a number or a time made here, never text from the file. */
export function insertStatement(logId: number, labId: number, firstSeq: number, rows: { at: number; tempC: number; rh: number | null }[]): string {
  const time = utcFormatter();
  let out = 'INSERT INTO chamber_readings (log_id, seq, lab_id, at, temp_c, rh) VALUES ';
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    out += `${i ? ',' : ''}(${logId},${firstSeq + i},${labId},'${time(r.at)}',${r.tempC},${r.rh === null ? 'NULL' : r.rh})`;
  }
  return out;
}

export interface ImportInput {
  /** The upload's id (chamber_logs.import_id): a retry with the same id is clean. */
  importId: string;
  labId: number;
  userId: number;
  condition: ConditionRow;
  filePath: string;
  fileName: string;
  layout: CsvLayout;
  timeZone: string;
}

/** A log of the lab by import id, whatever its state. */
export async function findImport(db: DbOrTx, labId: number, importId: string): Promise<LogRow | null> {
  const [row] = await db.select().from(chamberLogs).where(and(eq(chamberLogs.labId, labId), eq(chamberLogs.importId, importId))).limit(1);
  return row ?? null;
}

/** An import left 'importing' this long has stopped (a year of minute readings takes well under a minute). */
export const STALE_IMPORT_MINUTES = 10;
const stillImporting = () => new HttpError(409, 'conflict', 'This file is still being imported by another request; try again in a few minutes');

/** Rows removed per DELETE when a half-done import is cleaned up (small write sets, as when importing). */
const DISCARD_CHUNK = 50_000;

/** Removes a log that never completed: its readings in chunks, then the row. */
export async function discardImport(db: Db, logId: number): Promise<void> {
  for (const table of ['chamber_readings', 'chamber_rollups']) {
    for (;;) {
      const [res] = (await db.execute(sql`DELETE FROM ${sql.raw(table)} WHERE log_id = ${logId} LIMIT ${DISCARD_CHUNK}`)) as unknown as [{ affectedRows: number }];
      if (res.affectedRows < DISCARD_CHUNK) break;
    }
  }
  await db.delete(chamberLogs).where(and(eq(chamberLogs.id, logId), eq(chamberLogs.importState, 'importing')));
}

/** Imports that stopped half-way (a process killed mid-upload) and were not retried within `minutes`. */
export async function sweepStaleImports(db: Db, now: Date, minutes = STALE_IMPORT_MINUTES): Promise<number> {
  const stale = await db
    .select({ id: chamberLogs.id })
    .from(chamberLogs)
    .where(and(eq(chamberLogs.importState, 'importing'), sql`${chamberLogs.uploadedAt} < ${new Date(now.getTime() - minutes * 60_000)}`));
  for (const { id } of stale) await discardImport(db, id);
  return stale.length;
}

/**
 * Imports a logger CSV: the log row (state 'importing', shown nowhere), every reading in multi-row
 * INSERTs of 5 000 committed in chunks of 25 000 (the next batch parsed while the previous one is
 * written; a Galera cluster refuses a year of minute readings as one write set), then in one
 * transaction the whole-log summary computed while the rows streamed, the state 'complete' and the
 * audit row. A bad row throws CsvProblem and the partial log is removed. The same import id again
 * returns the completed log, or removes a half-done one and starts over.
 */
export async function importChamberLog(db: Db, input: ImportInput): Promise<number> {
  const { labId, userId, condition, layout } = input;
  const prior = await findImport(db, labId, input.importId);
  if (prior?.importState === 'complete') return prior.id;
  if (prior) {
    // Younger than this, it may still be running in another request or instance: never pull rows from under it.
    if (prior.uploadedAt.getTime() > Date.now() - STALE_IMPORT_MINUTES * 60_000) throw stillImporting();
    await discardImport(db, prior.id);
  }

  const band = bandFor(condition);
  const acc = new ChamberSummaryAccumulator(accumulatorOptions(band));
  const rollups = new HourlyRollups(accumulatorOptions(band));
  const source: LogSource = {
    encoding: layout.encoding,
    delimiter: layout.delimiter === '\t' ? 'tab' : layout.delimiter,
    headers: layout.headers.slice(0, 20).map((h) => h.slice(0, 60)),
    unit: layout.unit,
    unitFrom: layout.unitFrom,
    dateOrder: layout.dateOrder,
    dateOrderFrom: layout.dateOrderFrom,
    timeZone: input.timeZone,
  };

  const placeholder = new Date(0);
  let logId: number;
  try {
    [{ id: logId }] = await db.insert(chamberLogs).values({
      labId,
      conditionId: condition.id,
      fileName: input.fileName,
      sourceUnit: layout.unit,
      readingCount: 0,
      firstAt: placeholder,
      lastAt: placeholder,
      summary: {},
      uploadedBy: userId,
      importId: input.importId,
      importState: 'importing',
    }).$returningId();
  } catch (err) {
    const e = err as { errno?: number; cause?: { errno?: number } };
    if (e.errno === 1062 || e.cause?.errno === 1062) throw stillImporting();
    throw err;
  }

  try {
    let seq = 0;
    let pending: Promise<unknown> | null = null;
    const stream = createReadStream(input.filePath, { highWaterMark: 256 * 1024 });
    // One connection of the bulk pool (db/bulk.ts), a COMMIT every BATCHES_PER_COMMIT inserts: each
    // commit is an fsync (and a write set on Galera), so 21 for a year of minute readings, not 106.
    const conn = await bulkPoolOf(db).getConnection();
    try {
      await conn.query('START TRANSACTION');
      let inTransaction = 0;
      for await (const batch of readChamberCsv(stream, layout, { timeZone: input.timeZone, batchSize: INSERT_BATCH })) {
        for (const r of batch) acc.add(r);
        rollups.addBatch(batch, seq);
        const statement = insertStatement(logId, labId, seq, batch);
        seq += batch.length;
        if (pending) await pending;
        if (inTransaction === BATCHES_PER_COMMIT) {
          await conn.query('COMMIT');
          await conn.query('START TRANSACTION');
          inTransaction = 0;
        }
        pending = conn.query(statement);
        inTransaction++;
        // Keep a failed insert from being an unhandled rejection while the next batch parses.
        pending.catch(() => undefined);
      }
      if (pending) await pending;
      await conn.query('COMMIT');
    } catch (err) {
      stream.destroy();
      if (pending) await pending.catch(() => undefined);
      await conn.query('ROLLBACK').catch(() => undefined);
      throw err;
    } finally {
      conn.release();
    }

    const result = acc.result();
    if (result.count === 0) throw new CsvProblem('The file has a header row but no readings');
    const summary = toLogSummary(result, band, source);
    // Hourly roll-ups for period summaries (chamber-rollups.ts), committed like the readings.
    await writeRollups(db, logId, labId, rollups.rows());
    await db.transaction(async (tx) => {
      await tx
        .update(chamberLogs)
        .set({ readingCount: result.count, firstAt: new Date(result.first as number), lastAt: new Date(result.last as number), summary, importState: 'complete' })
        .where(eq(chamberLogs.id, logId));
      await audit(tx, {
        labId,
        userId,
        action: 'import',
        entity: 'chamber_log',
        entityId: logId,
        newValue: {
          conditionId: condition.id,
          fileName: input.fileName,
          readingCount: result.count,
          first: summary.first,
          last: summary.last,
          unit: layout.unit,
          mktC: summary.mktC,
          hoursOutOfTolerance: summary.hoursOutOfTolerance,
        },
      });
    });
    return logId;
  } catch (err) {
    // Best effort: a database that went away leaves the partial log to a retry or to sweepStaleImports.
    await discardImport(db, logId).catch(() => undefined);
    throw err;
  }
}

// ---------------------------------------------------------------- reading back

/** A stored reading as read back: mysql2 builds these objects directly (no copy per row). */
interface ReadingRow {
  at: number;
  tempC: number;
  rh: number | null;
}

/** The seq range of a log's readings within [from, to] (seq order is time order: imports refuse disorder). */
async function seqRange(db: DbOrTx, log: LogRow, from: number | null, to: number | null): Promise<[number, number] | null> {
  const conds = [sql`log_id = ${log.id}`, sql`lab_id = ${log.labId}`];
  if (from != null) conds.push(sql`at >= ${sqlTime(from)}`);
  if (to != null) conds.push(sql`at <= ${sqlTime(to)}`);
  const [rows] = (await db.execute(
    sql`SELECT MIN(seq) AS lo, MAX(seq) AS hi FROM chamber_readings WHERE ${sql.join(conds, sql` AND `)}`,
  )) as unknown as [{ lo: number | null; hi: number | null }[]];
  const r = rows[0];
  return r && r.lo != null && r.hi != null ? [Number(r.lo), Number(r.hi)] : null;
}

/** Streams a log's readings within [from, to] in chunks, in time order. */
export async function* readingsOf(
  db: DbOrTx,
  log: LogRow,
  from: number | null,
  to: number | null,
): AsyncGenerator<ReadingRow[]> {
  const range = await seqRange(db, log, from, to);
  if (!range) return;
  for (let lo = range[0]; lo <= range[1]; lo += FETCH_CHUNK) {
    const hi = Math.min(lo + FETCH_CHUNK - 1, range[1]);
    const [rows] = (await db.execute(sql`
      SELECT CAST(TIMESTAMPDIFF(MICROSECOND, '1970-01-01 00:00:00', at) DIV 1000 AS SIGNED) AS at, temp_c AS tempC, rh
      FROM chamber_readings
      WHERE log_id = ${log.id} AND lab_id = ${log.labId} AND seq BETWEEN ${lo} AND ${hi}
      ORDER BY seq`)) as unknown as [ReadingRow[]];
    // BIGINT comes back as a number while it is a safe integer (supportBigNumbers, no bigNumberStrings).
    if (rows.length && typeof rows[0].at !== 'number') for (const r of rows) r.at = Number(r.at);
    yield rows;
  }
}

/** Summary of a stored log over [from, to], judged against the band stored with the log. */
export async function summarizePeriod(db: DbOrTx, log: LogRow, from: number | null, to: number | null): Promise<LogSummary> {
  const stored = log.summary as LogSummary;
  // From the hourly roll-ups (chamber-rollups.ts: the same figures); a log stored before them is read raw.
  const fromRollups = '$client' in db ? await summarizeFromRollups(db as Db, log, accumulatorOptions(stored.band, from, to), from, to) : null;
  if (fromRollups) return toLogSummary(fromRollups, stored.band);
  const acc = new ChamberSummaryAccumulator(accumulatorOptions(stored.band, from, to));
  for await (const chunk of readingsOf(db, log, from, to)) for (const r of chunk) acc.add(r);
  return toLogSummary(acc.result(), stored.band);
}

/** Breaks a series with a null point wherever consecutive points are further apart than `gapMs`. */
function withGaps(points: SeriesPoint[], gapMs: number): [number, number | null][] {
  const out: [number, number | null][] = [];
  for (let i = 0; i < points.length; i++) {
    if (i > 0 && points[i].t - points[i - 1].t > gapMs) out.push([Math.round((points[i].t + points[i - 1].t) / 2), null]);
    out.push([points[i].t, points[i].v]);
  }
  return out;
}

/**
 * Chart series of a stored log over [from, to]: at most 2 x CHART_BUCKETS points per quantity.
 * Readings stream in chunks holding whole buckets of equal reading count, and each chunk goes
 * through downsampleMinMax (min and max of each bucket, in time order), so memory stays small.
 */
export async function seriesOf(db: DbOrTx, log: LogRow, from: number | null, to: number | null): Promise<SeriesOut> {
  const range = await seqRange(db, log, from, to);
  if (!range) return { temp: [], rh: null, reduced: false, readingCount: 0 };
  const n = range[1] - range[0] + 1;
  const reduced = n > 2 * CHART_BUCKETS;
  const perBucket = reduced ? Math.ceil(n / CHART_BUCKETS) : 1;
  const temp: SeriesPoint[] = [];
  const rh: SeriesPoint[] = [];
  let buffer: { at: number; tempC: number; rh: number | null }[] = [];
  const flush = (rows: typeof buffer) => {
    const t = rows.map((r) => ({ t: r.at, v: r.tempC }));
    const h: SeriesPoint[] = [];
    for (const r of rows) if (r.rh !== null) h.push({ t: r.at, v: r.rh });
    if (!reduced) {
      temp.push(...t);
      rh.push(...h);
      return;
    }
    for (const p of downsampleMinMax(t, Math.max(1, Math.ceil(t.length / perBucket)))) temp.push(p);
    if (h.length) for (const p of downsampleMinMax(h, Math.max(1, Math.ceil(h.length / perBucket)))) rh.push(p);
  };
  const chunkRows = perBucket * 50;
  for await (const chunk of readingsOf(db, log, from, to)) {
    buffer = buffer.length ? buffer.concat(chunk) : chunk;
    let start = 0;
    while (buffer.length - start >= chunkRows) {
      flush(buffer.slice(start, start + chunkRows));
      start += chunkRows;
    }
    buffer = start ? buffer.slice(start) : buffer;
  }
  if (buffer.length) flush(buffer);

  const stored = log.summary as LogSummary;
  const typical = stored.count > 1 ? (stored.spanHours * 3_600_000) / (stored.count - 1) : 0;
  const gap = Math.max(3 * typical, 2.5 * perBucket * typical, 1);
  return { temp: withGaps(temp, gap), rh: rh.length ? withGaps(rh, gap) : null, reduced, readingCount: n };
}

// ---------------------------------------------------------------- shapes

export function toLogMeta(l: LogRow, uploadedBy: string | null): ChamberLogMeta {
  return {
    id: l.id,
    conditionId: l.conditionId,
    fileName: l.fileName,
    sourceUnit: l.sourceUnit,
    readingCount: l.readingCount,
    firstAt: l.firstAt.toISOString(),
    lastAt: l.lastAt.toISOString(),
    uploadedAt: l.uploadedAt.toISOString(),
    uploadedBy,
  };
}

export function toLogListItem(l: LogRow, uploadedBy: string | null): ChamberLogListItem {
  const s = l.summary as LogSummary;
  return {
    ...toLogMeta(l, uploadedBy),
    minC: s.minC,
    maxC: s.maxC,
    meanC: s.meanC,
    mktC: s.mktC,
    hoursOutOfTolerance: s.hoursOutOfTolerance,
    excursionCount: s.excursionCount,
    rhMean: s.rh?.mean ?? null,
    rhHoursOutOfTolerance: s.rh?.hoursOutOfTolerance ?? null,
    band: s.band,
  };
}

/** A log of the lab, or null. */
export async function findLog(db: DbOrTx, labId: number, id: number): Promise<LogRow | null> {
  const [row] = await db
    .select()
    .from(chamberLogs)
    .where(and(eq(chamberLogs.labId, labId), eq(chamberLogs.id, id), eq(chamberLogs.importState, 'complete')))
    .limit(1);
  return row ?? null;
}

