/**
 * Hourly roll-ups of chamber logs (table chamber_rollups), written with each upload, so a summary of
 * a month or a year reads at most 24 x 366 rows instead of every reading.
 *
 * A period summary from roll-ups equals the one from the raw readings (tests/api/chamber-rollups.test.ts):
 * - count, min, max, mean, first, last and RH figures: from the hours wholly inside the period, plus
 *   the raw readings of the (at most two) hours the period's ends cut through;
 * - mean kinetic temperature from the sums of the Arrhenius terms exp(-ΔH/(R·T)), ΔH/R = 10 000 K
 *   (Haynes 1971, as in USP <1160>): T_mk = (ΔH/R) / -ln(Σ exp(-ΔH/(R·T_i)) / n);
 * - the largest gap: each hour keeps its own largest gap, first and last reading;
 * - hours out of tolerance and the excursions: the exact rule of ChamberSummaryAccumulator, run over
 *   the raw readings of the hours holding an out-of-tolerance reading, each with the next hour that
 *   has readings (whose first reading ends the excursion); every other reading is in tolerance and
 *   adds no out-of-tolerance time.
 * The raw readings stay: the chart, the CSV and these few hours read them.
 */
import { sql } from 'drizzle-orm';
import {
  ChamberSummaryAccumulator,
  MKT_DEFAULT_DELTA_H_OVER_R,
  type ChamberSummary,
  type ChamberSummaryOptions,
} from '../../shared/compute/storage';
import { KELVIN_OFFSET } from '../../shared/compute/units';
import type { Db, DbOrTx, Pool } from '../db/client';

const HOUR_MS = 3_600_000;
/** As ExcursionTracker in shared/compute/storage.ts: a reading exactly on the limit is in. */
const EPS = 1e-9;
/** Roll-up rows per INSERT. */
const INSERT_ROWS = 2000;

export interface RollupRow {
  /** Start of the UTC hour, epoch ms. */
  hourStart: number;
  n: number;
  seqFirst: number;
  seqLast: number;
  firstAt: number;
  lastAt: number;
  /** Longest time between consecutive readings within the hour, ms. */
  maxGapMs: number;
  tSum: number;
  tMin: number;
  tMax: number;
  /** Σ exp(-ΔH/(R·T)), T in kelvin, ΔH/R = 10 000 K. */
  arrheniusSum: number;
  /** Readings outside the temperature band. */
  tOut: number;
  rhN: number;
  rhSum: number;
  rhMin: number | null;
  rhMax: number | null;
  /** Readings outside the RH band (0 without an RH setpoint). */
  rhOut: number;
}

interface Reading {
  at: number;
  tempC: number;
  rh: number | null;
}

/** The Arrhenius term of one reading (ΔH/R = 10 000 K). */
export const arrhenius = (tempC: number) => Math.exp(-MKT_DEFAULT_DELTA_H_OVER_R / (tempC + KELVIN_OFFSET));

/** Out-of-tolerance tests of a band, as ChamberSummaryAccumulator judges readings. */
function judges(opts: ChamberSummaryOptions) {
  const tolC = opts.toleranceC ?? 2;
  const rhSet = opts.rhSetpoint ?? null;
  const rhTol = opts.rhTolerance ?? 5;
  return {
    tOut: (t: number) => Math.abs(t - opts.setpointC) > tolC + EPS,
    rhOut: (rh: number | null) => rhSet !== null && rh !== null && Math.abs(rh - rhSet) > rhTol + EPS,
  };
}

/** Builds the hourly roll-ups of a log while its readings stream in (in time order, with their seq). */
export class HourlyRollups {
  private readonly out: RollupRow[] = [];
  private cur: RollupRow | null = null;
  private readonly judge: ReturnType<typeof judges>;

  /** `opts`: the band the log is judged against (accumulatorOptions of its band). */
  constructor(opts: ChamberSummaryOptions) {
    this.judge = judges(opts);
  }

  add(r: Reading, seq: number): void {
    const hour = Math.floor(r.at / HOUR_MS) * HOUR_MS;
    let c = this.cur;
    if (!c || c.hourStart !== hour) {
      c = this.cur = {
        hourStart: hour,
        n: 0,
        seqFirst: seq,
        seqLast: seq,
        firstAt: r.at,
        lastAt: r.at,
        maxGapMs: 0,
        tSum: 0,
        tMin: Infinity,
        tMax: -Infinity,
        arrheniusSum: 0,
        tOut: 0,
        rhN: 0,
        rhSum: 0,
        rhMin: null,
        rhMax: null,
        rhOut: 0,
      };
      this.out.push(c);
    } else if (r.at - c.lastAt > c.maxGapMs) {
      c.maxGapMs = r.at - c.lastAt;
    }
    c.n++;
    c.seqLast = seq;
    c.lastAt = r.at;
    c.tSum += r.tempC;
    if (r.tempC < c.tMin) c.tMin = r.tempC;
    if (r.tempC > c.tMax) c.tMax = r.tempC;
    c.arrheniusSum += arrhenius(r.tempC);
    if (this.judge.tOut(r.tempC)) c.tOut++;
    const rh = r.rh ?? null;
    if (rh !== null && Number.isFinite(rh)) {
      c.rhN++;
      c.rhSum += rh;
      if (c.rhMin === null || rh < c.rhMin) c.rhMin = rh;
      if (c.rhMax === null || rh > c.rhMax) c.rhMax = rh;
    }
    if (this.judge.rhOut(rh !== null && Number.isFinite(rh) ? rh : null)) c.rhOut++;
  }

  /** A batch of consecutive readings, the first with seq `firstSeq`. */
  addBatch(rows: Reading[], firstSeq: number): void {
    for (let i = 0; i < rows.length; i++) this.add(rows[i], firstSeq + i);
  }

  rows(): RollupRow[] {
    return this.out;
  }
}

const num = (x: number | null) => (x === null ? 'NULL' : String(x));
const dt = (ms: number) => `'${new Date(ms).toISOString().slice(0, 23).replace('T', ' ')}'`;

/** Writes a log's roll-ups in multi-row INSERTs (every value a number or a time made here). */
export async function writeRollups(db: DbOrTx, logId: number, labId: number, rows: RollupRow[]): Promise<void> {
  for (let i = 0; i < rows.length; i += INSERT_ROWS) {
    const values = rows
      .slice(i, i + INSERT_ROWS)
      .map(
        (r) =>
          `(${logId},${dt(r.hourStart)},${labId},${r.n},${r.seqFirst},${r.seqLast},${dt(r.firstAt)},${dt(r.lastAt)},${r.maxGapMs},` +
          `${r.tSum},${r.tMin},${r.tMax},${r.arrheniusSum},${r.tOut},${r.rhN},${r.rhSum},${num(r.rhMin)},${num(r.rhMax)},${r.rhOut})`,
      )
      .join(',');
    await db.execute(
      sql.raw(
        'INSERT INTO chamber_rollups (log_id, hour_start, lab_id, n, seq_first, seq_last, first_at, last_at, max_gap_ms, ' +
          `t_sum, t_min, t_max, arrhenius_sum, t_out, rh_n, rh_sum, rh_min, rh_max, rh_out) VALUES ${values}`,
      ),
    );
  }
}

/** The mysql2 pool behind a Drizzle handle (prepared statements through `execute`). */
const clientOf = (db: DbOrTx) => (db as unknown as { $client: Pool }).$client;

const MS = (col: string) => `CAST(TIMESTAMPDIFF(MICROSECOND, '1970-01-01 00:00:00', ${col}) DIV 1000 AS SIGNED)`;
const ROLLUP_COLUMNS =
  `${MS('hour_start')} AS hourStart, n, seq_first AS seqFirst, seq_last AS seqLast, ${MS('first_at')} AS firstAt, ${MS('last_at')} AS lastAt, ` +
  'max_gap_ms AS maxGapMs, t_sum AS tSum, t_min AS tMin, t_max AS tMax, arrhenius_sum AS arrheniusSum, t_out AS tOut, ' +
  'rh_n AS rhN, rh_sum AS rhSum, rh_min AS rhMin, rh_max AS rhMax, rh_out AS rhOut';

const sqlTime = (ms: number) => new Date(ms).toISOString().slice(0, 23).replace('T', ' ');

/** Roll-ups of a log overlapping [from, to] (inclusive, epoch ms; null = open), in time order. */
async function rollupsOf(db: DbOrTx, logId: number, labId: number, from: number | null, to: number | null): Promise<RollupRow[]> {
  const params: (string | number)[] = [logId, labId];
  let where = 'log_id = ? AND lab_id = ?';
  if (from != null) {
    where += ' AND hour_start >= ?';
    params.push(sqlTime(Math.floor(from / HOUR_MS) * HOUR_MS));
  }
  if (to != null) {
    where += ' AND hour_start <= ?';
    params.push(sqlTime(to));
  }
  const [rows] = (await clientOf(db).execute(`SELECT ${ROLLUP_COLUMNS} FROM chamber_rollups WHERE ${where} ORDER BY hour_start`, params)) as unknown as [
    RollupRow[],
  ];
  for (const r of rows) {
    // BIGINT arrives as a number while safe (supportBigNumbers without bigNumberStrings); make sure.
    r.hourStart = Number(r.hourStart);
    r.firstAt = Number(r.firstAt);
    r.lastAt = Number(r.lastAt);
  }
  return rows;
}

/** Raw readings of a log whose seq lies in any of these ranges, in seq (= time) order. */
async function readingsInRanges(db: DbOrTx, logId: number, labId: number, ranges: [number, number][]): Promise<Reading[]> {
  if (!ranges.length) return [];
  const where = ranges.map(() => 'seq BETWEEN ? AND ?').join(' OR ');
  const [rows] = (await clientOf(db).execute(
    `SELECT ${MS('at')} AS at, temp_c AS tempC, rh FROM chamber_readings WHERE log_id = ? AND lab_id = ? AND (${where}) ORDER BY seq`,
    [logId, labId, ...ranges.flat()],
  )) as unknown as [Reading[]];
  for (const r of rows) r.at = Number(r.at);
  return rows;
}

/** Aggregates of one stretch of readings (a whole hour from its roll-up, or raw readings). */
interface Piece {
  n: number;
  firstAt: number;
  lastAt: number;
  maxGapMs: number;
  tSum: number;
  tMin: number;
  tMax: number;
  arrheniusSum: number;
  rhN: number;
  rhSum: number;
  rhMin: number | null;
  rhMax: number | null;
}

function pieceOf(readings: Reading[]): Piece | null {
  if (!readings.length) return null;
  const p: Piece = { n: 0, firstAt: readings[0].at, lastAt: readings[0].at, maxGapMs: 0, tSum: 0, tMin: Infinity, tMax: -Infinity, arrheniusSum: 0, rhN: 0, rhSum: 0, rhMin: null, rhMax: null };
  for (const r of readings) {
    if (r.at - p.lastAt > p.maxGapMs) p.maxGapMs = r.at - p.lastAt;
    p.lastAt = r.at;
    p.n++;
    p.tSum += r.tempC;
    if (r.tempC < p.tMin) p.tMin = r.tempC;
    if (r.tempC > p.tMax) p.tMax = r.tempC;
    p.arrheniusSum += arrhenius(r.tempC);
    if (r.rh !== null && Number.isFinite(r.rh)) {
      p.rhN++;
      p.rhSum += r.rh;
      if (p.rhMin === null || r.rh < p.rhMin) p.rhMin = r.rh;
      if (p.rhMax === null || r.rh > p.rhMax) p.rhMax = r.rh;
    }
  }
  return p;
}

/**
 * The summary of a log over [from, to] (inclusive, epoch ms; null = open) from its roll-ups, or null
 * when no roll-up covers the period (a log stored before roll-ups existed: read the raw readings).
 * `opts`: the band the log was judged against at upload, with the period.
 */
export async function summarizeFromRollups(
  db: DbOrTx,
  log: { id: number; labId: number },
  opts: ChamberSummaryOptions,
  from: number | null,
  to: number | null,
): Promise<ChamberSummary | null> {
  const all = await rollupsOf(db, log.id, log.labId, from, to);
  const lo = from ?? -Infinity;
  const hi = to ?? Infinity;
  const rows = all.filter((r) => r.lastAt >= lo && r.firstAt <= hi);
  if (!rows.length) return null;
  const whole = (r: RollupRow) => r.firstAt >= lo && r.lastAt <= hi;

  // Raw readings needed: hours cut by the period's ends, hours with an out-of-tolerance reading, and
  // the hour after each of those (its first reading ends an excursion that runs to the end of the hour).
  const need = new Set<number>();
  rows.forEach((r, i) => {
    if (!whole(r) || r.tOut > 0 || r.rhOut > 0) {
      need.add(i);
      if (i + 1 < rows.length) need.add(i + 1);
    }
  });
  const ranges: [number, number][] = [];
  for (const i of [...need].sort((a, b) => a - b)) {
    const last = ranges.at(-1);
    if (last && last[1] + 1 === rows[i].seqFirst) last[1] = rows[i].seqLast;
    else ranges.push([rows[i].seqFirst, rows[i].seqLast]);
  }
  const raw = (await readingsInRanges(db, log.id, log.labId, ranges)).filter((r) => r.at >= lo && r.at <= hi);

  // Excursions and hours out of tolerance: the accumulator's own rule over those readings.
  const acc = new ChamberSummaryAccumulator(opts);
  for (const r of raw) acc.add(r);
  const judged = acc.result();

  // Everything else from whole hours' roll-ups and the cut hours' raw readings, in time order.
  const pieces: Piece[] = [];
  let k = 0;
  for (const r of rows) {
    if (whole(r)) {
      pieces.push(r);
      continue;
    }
    const mine: Reading[] = [];
    while (k < raw.length && raw[k].at < r.firstAt) k++;
    let j = k;
    while (j < raw.length && raw[j].at <= r.lastAt) mine.push(raw[j++]);
    const p = pieceOf(mine);
    if (p) pieces.push(p);
  }
  if (!pieces.length) return null;

  let n = 0;
  let tSum = 0;
  let arrSum = 0;
  let tMin = Infinity;
  let tMax = -Infinity;
  let rhN = 0;
  let rhSum = 0;
  let rhMin = Infinity;
  let rhMax = -Infinity;
  let gap = 0;
  let prevLast: number | null = null;
  for (const p of pieces) {
    n += p.n;
    tSum += p.tSum;
    arrSum += p.arrheniusSum;
    if (p.tMin < tMin) tMin = p.tMin;
    if (p.tMax > tMax) tMax = p.tMax;
    rhN += p.rhN;
    rhSum += p.rhSum;
    if (p.rhMin !== null && p.rhMin < rhMin) rhMin = p.rhMin;
    if (p.rhMax !== null && p.rhMax > rhMax) rhMax = p.rhMax;
    if (p.maxGapMs > gap) gap = p.maxGapMs;
    if (prevLast !== null && p.firstAt - prevLast > gap) gap = p.firstAt - prevLast;
    prevLast = p.lastAt;
  }
  const first = pieces[0].firstAt;
  const last = pieces.at(-1)!.lastAt;
  const mktC = MKT_DEFAULT_DELTA_H_OVER_R / -Math.log(arrSum / n) - KELVIN_OFFSET;
  return {
    count: n,
    ignored: 0,
    first,
    last,
    minC: tMin,
    maxC: tMax,
    meanC: tSum / n,
    mktC,
    spanHours: (last - first) / HOUR_MS,
    largestGapHours: gap / HOUR_MS,
    hoursOutOfTolerance: judged.hoursOutOfTolerance,
    excursions: judged.excursions,
    rh:
      rhN === 0
        ? null
        : {
            count: rhN,
            min: rhMin,
            max: rhMax,
            mean: rhSum / rhN,
            hoursOutOfTolerance: opts.rhSetpoint == null ? null : (judged.rh?.hoursOutOfTolerance ?? 0),
            excursions: judged.rh?.excursions ?? [],
          },
  };
}

export interface ConditionMkt {
  n: number;
  mktC: number;
  minC: number;
  maxC: number;
  meanC: number;
  /** First and last day with readings, YYYY-MM-DD. */
  first: string;
  last: string;
}

/**
 * Mean kinetic temperature and extremes of each condition's logs over whole days [from, to + 1 day)
 * (dates YYYY-MM-DD, UTC), from the roll-ups, in one statement; logs without roll-ups are read raw.
 */
export async function conditionMkts(db: Db, labId: number, conditionIds: number[], from: string, to: string): Promise<Map<number, ConditionMkt>> {
  const out = new Map<number, ConditionMkt>();
  const ids = [...new Set(conditionIds)];
  if (!ids.length) return out;
  const inList = ids.map(() => '?').join(', ');
  const [rows] = (await clientOf(db).execute(
    `SELECT condition_id, SUM(n) AS n, SUM(arrhenius_sum) AS arr, SUM(t_sum) AS tsum, MIN(t_min) AS tmin, MAX(t_max) AS tmax,
            DATE_FORMAT(MIN(first_at), '%Y-%m-%d') AS first, DATE_FORMAT(MAX(last_at), '%Y-%m-%d') AS last
       FROM (
         SELECT l.condition_id, r.n, r.arrhenius_sum, r.t_sum, r.t_min, r.t_max, r.first_at, r.last_at
           FROM chamber_logs l JOIN chamber_rollups r ON r.log_id = l.id
          WHERE l.lab_id = ? AND l.condition_id IN (${inList}) AND r.hour_start >= ? AND r.hour_start < DATE_ADD(?, INTERVAL 1 DAY)
         UNION ALL
         SELECT l.condition_id, 1, EXP(-${MKT_DEFAULT_DELTA_H_OVER_R} / (c.temp_c + ${KELVIN_OFFSET})), c.temp_c, c.temp_c, c.temp_c, c.at, c.at
           FROM chamber_logs l JOIN chamber_readings c ON c.log_id = l.id
          WHERE l.lab_id = ? AND l.condition_id IN (${inList}) AND c.at >= ? AND c.at < DATE_ADD(?, INTERVAL 1 DAY)
            AND NOT EXISTS (SELECT 1 FROM chamber_rollups x WHERE x.log_id = l.id)
       ) AS p
      GROUP BY condition_id`,
    [labId, ...ids, from, to, labId, ...ids, from, to],
  )) as unknown as [{ condition_id: number; n: string | number; arr: number | null; tsum: number; tmin: number; tmax: number; first: string; last: string }[]];
  for (const r of rows) {
    const n = Number(r.n);
    if (!n || r.arr == null) continue;
    out.set(Number(r.condition_id), {
      n,
      mktC: MKT_DEFAULT_DELTA_H_OVER_R / -Math.log(Number(r.arr) / n) - KELVIN_OFFSET,
      minC: Number(r.tmin),
      maxC: Number(r.tmax),
      meanC: Number(r.tsum) / n,
      first: String(r.first),
      last: String(r.last),
    });
  }
  return out;
}

/** {@link conditionMkts} of one condition, or null without readings in the period. */
export async function conditionMkt(db: Db, labId: number, conditionId: number, from: string, to: string): Promise<ConditionMkt | null> {
  return (await conditionMkts(db, labId, [conditionId], from, to)).get(conditionId) ?? null;
}

/** Readings read per query when building roll-ups of a stored log. */
const BACKFILL_CHUNK = 50_000;

/**
 * Builds and writes the roll-ups of a log stored before roll-ups existed (run once per log by
 * server/db/data-migrations.ts, in one transaction with a check that none exist yet).
 */
export async function backfillRollups(db: Db, log: { id: number; labId: number }, opts: ChamberSummaryOptions): Promise<number> {
  return db.transaction(async (tx) => {
    const [locked] = (await tx.execute(sql`SELECT id FROM chamber_logs WHERE id = ${log.id} FOR UPDATE`)) as unknown as [{ id: number }[]];
    const [have] = (await tx.execute(sql`SELECT COUNT(*) AS n FROM chamber_rollups WHERE log_id = ${log.id}`)) as unknown as [{ n: number }[]];
    if (!locked.length || Number(have[0].n) > 0) return 0;
    const rollups = new HourlyRollups(opts);
    for (let lo = 0; ; lo += BACKFILL_CHUNK) {
      const [rows] = (await tx.execute(
        sql.raw(
          `SELECT seq, ${MS('at')} AS at, temp_c AS tempC, rh FROM chamber_readings WHERE log_id = ${Number(log.id)} AND seq >= ${lo} AND seq < ${lo + BACKFILL_CHUNK} ORDER BY seq`,
        ),
      )) as unknown as [{ seq: number; at: number; tempC: number; rh: number | null }[]];
      for (const r of rows) rollups.add({ at: Number(r.at), tempC: r.tempC, rh: r.rh }, r.seq);
      if (rows.length < BACKFILL_CHUNK) break;
    }
    await writeRollups(tx, log.id, log.labId, rollups.rows());
    return rollups.rows().length;
  });
}
