/**
 * Demo storage for one lab: every preset condition with an invented location, and one invented
 * month of chamber log for the 45 °C oven (a reading every 5 minutes, a small daily wobble, and one
 * short excursion when the door stayed open at a checkpoint). Deterministic: a seeded
 * pseudo-random generator, no Math.random. Invented for the demo only; not reference data.
 */
import { eq, sql } from 'drizzle-orm';
import { ChamberSummaryAccumulator } from '../../shared/compute/storage';
import { conditionInput } from '../../shared/schemas/storage';
import { STORAGE_PRESETS, type PresetKey } from '../../shared/storage-presets';
import type { DbOrTx } from '../db/client';
import { chamberLogs, storageConditions } from '../db/schema';
import { audit } from '../services/audit';
import { INSERT_BATCH, accumulatorOptions, bandFor, insertStatement, toLogSummary } from '../services/chamber-logs';
import { HourlyRollups, writeRollups } from '../services/chamber-rollups';
import { columnsOf } from '../services/storage-conditions';

/** Invented locations of the demo lab's conditions. */
export const DEMO_LOCATIONS: Record<PresetKey, string> = {
  'fridge-4': 'fridge 1',
  room: 'shelf by the lab bench',
  'in-use': 'bench drawer, opened each morning',
  'ich-25-60': 'climate cabinet',
  'ich-30-65': 'climate cabinet 2',
  'ich-40-75': 'climate cabinet 3',
  'oven-45': 'oven 1',
  'oven-50': 'oven 2',
  'freeze-thaw': 'freezer + bench',
  'window-daylight': 'south window',
  'centrifuge-3000': 'centrifuge',
};

const DAY = 86_400_000;
const STEP = 5 * 60_000;

/** mulberry32: a small seeded PRNG (public domain, Tommy Ettinger), uniform in [0, 1). */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * The invented oven month: 30 days of readings every 5 minutes ending at `end` (UTC), 45 °C with a
 * daily wobble of ±0.35 °C, logger noise, 0.1 °C resolution, and on day 17 a door left open at
 * 10:20 UTC: the oven falls to 41.9 °C and is back within ±2 °C after 15 minutes.
 */
export function demoOvenReadings(end: number): { at: number; tempC: number; rh: null }[] {
  const rand = mulberry32(45_2026);
  const start = end - 30 * DAY;
  const doorOpen = start + 16 * DAY + (10 * 60 + 20) * 60_000;
  const dip = [44.1, 42.6, 41.9, 42.4, 43.1, 43.8, 44.5];
  const out: { at: number; tempC: number; rh: null }[] = [];
  for (let at = start; at < end; at += STEP) {
    const hour = (at % DAY) / 3_600_000;
    const wobble = 0.35 * Math.sin((2 * Math.PI * (hour - 9)) / 24);
    const noise = (rand() - 0.5) * 0.16;
    const k = Math.round((at - doorOpen) / STEP);
    const t = k >= 0 && k < dip.length ? dip[k] : 45 + wobble + noise;
    out.push({ at, tempC: Math.round(t * 10) / 10, rh: null });
  }
  return out;
}

/**
 * Creates the preset conditions for a lab and the 45 °C oven's month of log, inside the caller's
 * transaction. Returns the condition ids by preset key.
 */
export async function seedStorage(tx: DbOrTx, labId: number, userId: number): Promise<Record<PresetKey, number>> {
  const ids = {} as Record<PresetKey, number>;
  for (const preset of STORAGE_PRESETS) {
    const values = columnsOf(conditionInput.parse({ ...preset.input, location: DEMO_LOCATIONS[preset.key] }));
    const [{ id }] = await tx.insert(storageConditions).values({ ...values, labId, createdBy: userId }).$returningId();
    await audit(tx, { labId, userId, action: 'create', entity: 'storage_condition', entityId: id, newValue: { ...values, demo: true } });
    ids[preset.key] = id;
  }

  const [oven] = await tx.select().from(storageConditions).where(eq(storageConditions.id, ids['oven-45']));
  const end = Math.floor(Date.now() / DAY) * DAY;
  const readings = demoOvenReadings(end);
  const band = bandFor(oven);
  const acc = new ChamberSummaryAccumulator(accumulatorOptions(band));
  for (const r of readings) acc.add(r);
  const result = acc.result();
  const month = new Date(readings[0].at).toISOString().slice(0, 7);
  const [{ id: logId }] = await tx
    .insert(chamberLogs)
    .values({
      labId,
      conditionId: oven.id,
      fileName: `oven1-45C-${month}.csv`,
      sourceUnit: 'C',
      readingCount: result.count,
      firstAt: new Date(result.first as number),
      lastAt: new Date(result.last as number),
      summary: toLogSummary(result, band, {
        encoding: 'utf8',
        delimiter: ',',
        headers: ['Timestamp', 'Temperature (°C)'],
        unit: 'C',
        unitFrom: 'header',
        dateOrder: 'DMY',
        dateOrderFrom: 'default',
        timeZone: 'UTC',
      }),
      uploadedBy: userId,
    })
    .$returningId();
  for (let i = 0; i < readings.length; i += INSERT_BATCH) {
    await tx.execute(sql.raw(insertStatement(logId, labId, i, readings.slice(i, i + INSERT_BATCH))));
  }
  const rollups = new HourlyRollups(accumulatorOptions(band));
  rollups.addBatch(readings, 0);
  await writeRollups(tx, logId, labId, rollups.rows());
  await audit(tx, {
    labId,
    userId,
    action: 'import',
    entity: 'chamber_log',
    entityId: logId,
    newValue: { conditionId: oven.id, readingCount: result.count, demo: true },
  });
  return ids;
}
