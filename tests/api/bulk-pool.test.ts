/**
 * Chamber-log imports go through the bulk pool when one is set (server/db/bulk.ts: TCP beside the
 * app's socket in `npm start`), and through the app's own pool otherwise; either way every reading is
 * stored once.
 */
import { afterAll, beforeAll, describe, expect, inject, it, vi } from 'vitest';
import { bulkPoolOf, useBulkPool } from '../../server/db/bulk';
import { createPool, type Pool } from '../../server/db/client';
import { poolOf } from '../../server/db/prepared';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let formulator: Client;
let conditionId: number;
let bulk: Pool;

const ROWS = 3000;
const csv = (offsetMin: number) => {
  const lines = ['Timestamp,Temp (°C),RH (%)'];
  for (let i = 0; i < ROWS; i++) lines.push(`${new Date(Date.UTC(2025, 5, 1) + (offsetMin + i) * 60_000).toISOString()},25.${i % 10},60.0`);
  return Buffer.from(`${lines.join('\n')}\n`, 'utf8');
};
async function upload(name: string, offsetMin: number) {
  return formulator.agent.post(`/api/storage-conditions/${conditionId}/logs`).set('X-Keepwell-Request', '1').attach('file', csv(offsetMin), name);
}
async function storedReadings(logId: number): Promise<number> {
  const [rows] = (await t.pool.query('SELECT COUNT(*) AS n FROM chamber_readings WHERE log_id = ?', [logId])) as unknown as [{ n: number }[]];
  return Number(rows[0].n);
}

beforeAll(async () => {
  t = await createTestApp();
  formulator = await t.signIn(DEMO.formulator);
  const cond = await formulator.post('/api/storage-conditions', { kind: 'constant', name: '25 °C shelf', location: 'shelf 1', setpointC: 25 });
  expect(cond.status, JSON.stringify(cond.body)).toBe(201);
  conditionId = cond.body.condition.id;
  const m = inject('mariadb');
  bulk = createPool({ host: '127.0.0.1', port: m.port, user: m.appUser, password: m.appPassword, database: t.database }, 2);
});
afterAll(async () => {
  await bulk?.end();
  await t?.close();
});

/** The app pool's connections taken while one upload runs (the import's, and the transactions' around it). */
let ownCallsWithoutBulk = 0;

describe('the bulk pool', () => {
  it("is the app's own pool until one is set", async () => {
    expect(bulkPoolOf(t.db)).toBe(poolOf(t.db));
    const spy = vi.spyOn(poolOf(t.db), 'getConnection');
    const res = await upload('own-pool.csv', 0);
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(spy).toHaveBeenCalled();
    ownCallsWithoutBulk = spy.mock.calls.length;
    spy.mockRestore();
    expect(await storedReadings(res.body.log.id)).toBe(ROWS);
  });

  it('takes the import once set, and stores every reading once', async () => {
    useBulkPool(t.db, bulk);
    expect(bulkPoolOf(t.db)).toBe(bulk);
    const own = vi.spyOn(poolOf(t.db), 'getConnection');
    const viaBulk = vi.spyOn(bulk, 'getConnection');
    const res = await upload('bulk-pool.csv', ROWS);
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(viaBulk).toHaveBeenCalledTimes(1);
    // The import's one connection moved from the app's pool to the bulk pool; the rest stayed.
    expect(own.mock.calls.length).toBe(ownCallsWithoutBulk - 1);
    own.mockRestore();
    viaBulk.mockRestore();
    expect(await storedReadings(res.body.log.id)).toBe(ROWS);
  });
});
