/**
 * Period summaries from the hourly roll-ups (server/services/chamber-rollups.ts) equal those from the
 * raw readings: on an uploaded log with temperature and RH excursions (some crossing hour boundaries,
 * one ending on the hour), a three-hour logger gap, readings without RH and readings off the minute,
 * for periods whose ends cut through hours. Mean kinetic temperature as defined by Haynes 1971 (USP
 * <1160>): T_mk = (ΔH/R) / -ln(Σ exp(-ΔH/(R·T_i)) / n), ΔH/R = 10 000 K; the reference figures come
 * from the shared accumulator run over the very readings of the file.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eq } from 'drizzle-orm';
import { runDataMigrations } from '../../server/db/data-migrations';
import { chamberLogs, chamberRollups } from '../../server/db/schema';
import { accumulatorOptions, summarizePeriod } from '../../server/services/chamber-logs';
import { conditionMkt, summarizeFromRollups } from '../../server/services/chamber-rollups';
import { summarizeChamberLog, type ChamberReading } from '../../shared/compute/storage';
import type { LogSummary } from '../../shared/schemas/storage';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let formulator: Client;
let conditionId: number;
let logId: number;
const readings: ChamberReading[] = [];

const MINUTE = 60_000;
/** 00:00:30 UTC: every reading sits half a minute off the hour. */
const T0 = Date.UTC(2025, 2, 30, 0, 0, 30);
const N = 8 * 24 * 60;
const GAP = [3000, 3180] as const;

function reading(i: number): ChamberReading | null {
  if (i >= GAP[0] && i < GAP[1]) return null; // the logger was off for three hours
  const at = T0 + i * MINUTE + (i % 7 === 3 ? 1234 : 0);
  const hot = (i >= 400 && i < 475) || (i >= 1430 && i < 1440) || (i >= 5000 && i < 5003) || i === 7000;
  const tempC = hot ? 43.4 + (i % 5) * 0.3 : 40 + 0.6 * Math.sin(i / 90) + 0.01 * (i % 13);
  const wet = i >= 2000 && i < 2130;
  const rh = i >= 6000 && i < 6100 ? null : wet ? 81.5 : 75 + 2 * Math.sin(i / 300);
  return { at, tempC: Math.round(tempC * 100) / 100, rh: rh === null ? null : Math.round(rh * 10) / 10 };
}

beforeAll(async () => {
  t = await createTestApp();
  formulator = await t.signIn(DEMO.formulator);
  const cond = await formulator.post('/api/storage-conditions', { kind: 'constant', name: '40 °C / 75 % RH', location: 'cabinet 2', setpointC: 40, rhPercent: 75 });
  expect(cond.status, JSON.stringify(cond.body)).toBe(201);
  conditionId = cond.body.condition.id;
  const lines = ['Timestamp,Temp (°C),RH (%)'];
  for (let i = 0; i < N; i++) {
    const r = reading(i);
    if (!r) continue;
    readings.push(r);
    lines.push(`${new Date(r.at as number).toISOString()},${r.tempC.toFixed(2)},${r.rh === null ? '' : r.rh!.toFixed(1)}`);
  }
  const res = await formulator.agent
    .post(`/api/storage-conditions/${conditionId}/logs`)
    .set('X-Keepwell-Request', '1')
    .attach('file', Buffer.from(`${lines.join('\n')}\n`, 'utf8'), 'cabinet2.csv');
  expect(res.status, JSON.stringify(res.body)).toBe(201);
  logId = res.body.log.id;
});
afterAll(async () => t?.close());

const log = async () => (await t.db.select().from(chamberLogs).where(eq(chamberLogs.id, logId)))[0];

/** The figures a period summary carries, compared to 10 decimal places (sums in another order differ in the last bits). */
function expectSame(got: LogSummary, want: LogSummary) {
  expect(got.count).toBe(want.count);
  expect(got.first).toBe(want.first);
  expect(got.last).toBe(want.last);
  for (const k of ['minC', 'maxC', 'meanC', 'mktC', 'spanHours', 'largestGapHours', 'hoursOutOfTolerance'] as const) {
    if (want[k] === null) expect(got[k], k).toBeNull();
    else expect(got[k], k).toBeCloseTo(want[k] as number, 10);
  }
  expect(got.excursions).toEqual(want.excursions);
  expect(got.excursionCount).toBe(want.excursionCount);
  if (want.rh === null) expect(got.rh).toBeNull();
  else {
    expect(got.rh).toMatchObject({ count: want.rh.count, min: want.rh.min, max: want.rh.max, excursionCount: want.rh.excursionCount });
    expect(got.rh!.mean).toBeCloseTo(want.rh.mean, 10);
    expect(got.rh!.hoursOutOfTolerance!).toBeCloseTo(want.rh.hoursOutOfTolerance!, 10);
    expect(got.rh!.excursions).toEqual(want.rh.excursions);
  }
}

describe('hourly roll-ups', () => {
  it('are written with the upload: one row per hour with readings', async () => {
    const rows = await t.db.select().from(chamberRollups).where(eq(chamberRollups.logId, logId));
    const hours = new Set(readings.map((r) => Math.floor((r.at as number) / 3_600_000)));
    expect(rows).toHaveLength(hours.size);
    expect(rows.reduce((n, r) => n + r.n, 0)).toBe(readings.length);
  });

  const periods: [string, number | null, number | null][] = [
    ['the whole log', null, null],
    ['from and to cutting through hours, across the gap and every excursion', T0 + 95 * MINUTE + 17_000, T0 + 7100 * MINUTE + 5_000],
    ['inside one hour', T0 + 410 * MINUTE, T0 + 440 * MINUTE],
    ['ending during an excursion', T0 + 300 * MINUTE, T0 + 450 * MINUTE],
    ['starting during an excursion', T0 + 450 * MINUTE, T0 + 2200 * MINUTE],
    ['whole hours only', Date.UTC(2025, 2, 31), Date.UTC(2025, 3, 2) - 1],
    ['only the gap', T0 + (GAP[0] + 5) * MINUTE, T0 + (GAP[1] - 5) * MINUTE],
  ];

  it.each(periods)('summarise %s exactly as the raw readings do', async (_what, from, to) => {
    const l = await log();
    const viaRollups = await summarizePeriod(t.db, l, from, to);
    // A transaction handle has no pool of its own: summarizePeriod then reads every raw reading.
    const viaRaw = await t.db.transaction((tx) => summarizePeriod(tx, l, from, to));
    expectSame(viaRollups, viaRaw);
    // And the same as the shared accumulator over the file's readings (what the upload computed from).
    const band = (l.summary as LogSummary).band;
    const reference = summarizeChamberLog(readings, accumulatorOptions(band, from, to));
    expect(viaRollups.count).toBe(reference.count);
    if (reference.count > 0) {
      expect(viaRollups.mktC!).toBeCloseTo(reference.mktC!, 10);
      expect(viaRollups.meanC!).toBeCloseTo(reference.meanC!, 10);
      expect(viaRollups.minC).toBe(reference.minC);
      expect(viaRollups.maxC).toBe(reference.maxC);
      expect(viaRollups.hoursOutOfTolerance!).toBeCloseTo(reference.hoursOutOfTolerance, 10);
      expect(viaRollups.excursionCount).toBe(reference.excursions.length);
    }
  });

  it('read roll-ups, not every reading, for a period of whole hours', async () => {
    const l = await log();
    const from = Date.UTC(2025, 2, 31);
    const to = Date.UTC(2025, 3, 2) - 1;
    const s = await summarizeFromRollups(t.db, l, accumulatorOptions((l.summary as LogSummary).band, from, to), from, to);
    expect(s).not.toBeNull();
    expect(s!.count).toBe(readings.filter((r) => (r.at as number) >= from && (r.at as number) <= to).length);
  });

  it('give the analysis its condition MKT over whole days, as the readings do', async () => {
    const m = await conditionMkt(t.db, t.labs[0].id, conditionId, '2025-03-31', '2025-04-02');
    const inDays = readings.filter((r) => (r.at as number) >= Date.UTC(2025, 2, 31) && (r.at as number) < Date.UTC(2025, 3, 3));
    const reference = summarizeChamberLog(inDays, { setpointC: 40 });
    expect(m!.n).toBe(inDays.length);
    expect(m!.mktC).toBeCloseTo(reference.mktC!, 10);
    expect(m!.meanC).toBeCloseTo(reference.meanC!, 10);
    expect([m!.minC, m!.maxC]).toEqual([reference.minC, reference.maxC]);
    expect([m!.first, m!.last]).toEqual(['2025-03-31', '2025-04-02']);
  });

  it('are built by the data migration for a log stored before them, with the same figures', async () => {
    const before = await t.db.select().from(chamberRollups).where(eq(chamberRollups.logId, logId));
    await t.db.delete(chamberRollups).where(eq(chamberRollups.logId, logId));
    await runDataMigrations(t.db);
    const after = await t.db.select().from(chamberRollups).where(eq(chamberRollups.logId, logId));
    expect(after).toEqual(before);
  });

  it('answer the HTTP summary from roll-ups with the same figures', async () => {
    const from = new Date(T0 + 95 * MINUTE + 17_000).toISOString();
    const to = new Date(T0 + 7100 * MINUTE + 5_000).toISOString();
    const res = await formulator.get(`/api/chamber-logs/${logId}/summary?from=${from}&to=${to}`);
    expect(res.status).toBe(200);
    const l = await log();
    expectSame(res.body.summary, await t.db.transaction((tx) => summarizePeriod(tx, l, Date.parse(from), Date.parse(to))));
  });
});
