/**
 * Minimal lab data inserted straight into the database, for tests that need a
 * product, batches and storage conditions without going through those routes.
 * Invented values, for tests only.
 */
import { eq } from 'drizzle-orm';
import type { Db } from '../../server/db/client';
import type { Client } from './app';
import { attributes, batches, formulaLines, ingredients, products, storageConditions, variants } from '../../server/db/schema';
import type { Offset } from '../../shared/compute/schedule';

export interface Catalogue {
  productId: number;
  variantIds: number[];
  batchIds: number[];
  conditions: { fridge: number; oven45: number; freezeThaw: number; room: number };
  attributeIds: Record<string, number>;
}

let counter = 0;

export async function makeCatalogue(db: Db, labId: number, name = 'Test cream'): Promise<Catalogue> {
  const n = ++counter;
  const [{ id: ingredientId }] = await db
    .insert(ingredients)
    .values({ labId, tradeName: `Water ${n}`, inciName: 'Aqua', function: 'solvent' })
    .$returningId();
  const [{ id: productId }] = await db.insert(products).values({ labId, name: `${name} ${n}`, type: 'oil_in_water' }).$returningId();
  const variantIds: number[] = [];
  const batchIds: number[] = [];
  for (const code of ['A', 'B']) {
    const [{ id: variantId }] = await db.insert(variants).values({ labId, productId, code, name: `Variant ${code}` }).$returningId();
    await db.insert(formulaLines).values({ labId, variantId, position: 0, ingredientId, phase: 'A', percent: 100 });
    variantIds.push(variantId);
    const [{ id: batchId }] = await db
      .insert(batches)
      .values({
        labId,
        variantId,
        lotCode: `T${n}-${code}`,
        madeOn: '2026-11-02',
        sizeGrams: 1000,
        packaging: '50 mL PET jar, PP lid',
        formulaSnapshot: [{ ingredient: 'Aqua', percent: 100 }],
      })
      .$returningId();
    batchIds.push(batchId);
  }
  const cond = async (values: Omit<typeof storageConditions.$inferInsert, 'labId'>) =>
    (await db.insert(storageConditions).values({ labId, ...values }).$returningId())[0].id;
  const conditions = {
    fridge: await cond({ name: `4 °C control ${n}`, kind: 'constant', setpointC: 4, toleranceC: 2, location: 'fridge 1', isControl: true }),
    oven45: await cond({ name: `45 °C ${n}`, kind: 'constant', setpointC: 45, toleranceC: 2, location: 'oven 2' }),
    freezeThaw: await cond({ name: `Freeze-thaw ${n}`, kind: 'cycling', lowC: -10, highC: 25, hoursLow: 24, hoursHigh: 24, location: 'freezer + bench' }),
    room: await cond({ name: `25 °C / 60 % RH ${n}`, kind: 'constant', setpointC: 25, rhPercent: 60, toleranceC: 2, toleranceRh: 5, location: 'climate cabinet' }),
  };
  const attrRows = await db.select({ id: attributes.id, code: attributes.code }).from(attributes).where(eq(attributes.labId, labId));
  return { productId, variantIds, batchIds, conditions, attributeIds: Object.fromEntries(attrRows.map((a) => [a.code, a.id])) };
}

/** A plan for the catalogue: both batches, fridge control + 45 °C oven, pH/separation/odor. */
export function planFor(c: Catalogue, startDate = '2026-11-02') {
  return {
    productId: c.productId,
    title: 'Test study',
    startDate,
    batchIds: c.batchIds,
    conditions: [
      { conditionId: c.conditions.fridge, role: 'control' as const, template: 'accelerated-12w', offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] as Offset[] },
      { conditionId: c.conditions.oven45, role: 'accelerated' as const, template: 'accelerated-12w', offsets: [{ unit: 'week', n: 1 }, { unit: 'week', n: 4 }] as Offset[] },
    ],
    attributes: [
      { attributeId: c.attributeIds.ph, criterion: { kind: 'change_abs' as const, max: 0.5 } },
      { attributeId: c.attributeIds.separation, criterion: { kind: 'worst_grade' as const, grade: 1 } },
      { attributeId: c.attributeIds.odor, criterion: { kind: 'worst_compared' as const, level: 'slight' as const } },
    ],
    samplesPerCell: 1,
    containerDescription: '50 mL PET jar',
    fillGrams: 45,
  };
}

/**
 * An invented hourly logger CSV from `from` (UTC midnight) for `hours` hours around `setC`: a slow
 * ±0.6 °C wave and, every `spikeEvery` hours (at half that offset), one warm reading `spikeC` above.
 */
export function hourlyLog(from: string, hours: number, setC: number, spikeEvery = 400, spikeC = 2.8): string {
  const t0 = Date.parse(`${from}T00:00:00Z`);
  const lines = ['Timestamp,Temp (°C)'];
  for (let i = 0; i < hours; i++) {
    const v = setC + 0.6 * Math.sin(i / 7) + (i % spikeEvery === spikeEvery / 2 ? spikeC : 0);
    lines.push(`${new Date(t0 + i * 3_600_000).toISOString().replace('.000Z', 'Z')},${v.toFixed(2)}`);
  }
  return `${lines.join('\n')}\n`;
}

/** Uploads one hourly log (see hourlyLog) per [condition id, setpoint] through the API, as the formulator would. */
export async function uploadHourlyLogs(
  client: Pick<Client, 'agent'>,
  conditions: readonly (readonly [number, number])[],
  from: string,
  hours: number,
  spike?: { every: number; c: number },
): Promise<void> {
  for (const [id, setC] of conditions) {
    const res = await client.agent
      .post(`/api/storage-conditions/${id}/logs`)
      .set('X-Keepwell-Request', '1')
      .attach('file', Buffer.from(hourlyLog(from, hours, setC, spike?.every, spike?.c), 'utf8'), `logger-${setC}.csv`);
    if (res.status !== 201) throw new Error(`log upload answered ${res.status}: ${JSON.stringify(res.body)}`);
  }
}
