import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { and, eq, sql } from 'drizzle-orm';
import { auditLog, chamberLogs, chamberReadings, storageConditions } from '../../server/db/schema';
import { meanKineticTemperature } from '../../shared/compute/storage';
import { STORAGE_PRESETS } from '../../shared/storage-presets';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let owner: Client, formulator: Client, technician: Client, otherOwner: Client;

beforeAll(async () => {
  t = await createTestApp();
  [owner, formulator, technician, otherOwner] = await Promise.all([
    t.signIn(DEMO.owner),
    t.signIn(DEMO.formulator),
    t.signIn(DEMO.technician),
    t.signIn(DEMO.otherOwner),
  ]);
});
afterAll(async () => t?.close());

const MINUTE = 60_000;
const T0 = Date.UTC(2026, 0, 5, 0, 0, 0);
const isoZ = (ms: number) => new Date(ms).toISOString().replace('.000Z', 'Z');

function upload(who: Client, conditionId: number, content: string | Buffer, fields: Record<string, string> = {}, name = 'logger.csv') {
  const req = who.agent.post(`/api/storage-conditions/${conditionId}/logs`).set('X-Keepwell-Request', '1');
  for (const [k, v] of Object.entries(fields)) req.field(k, v);
  return req.attach('file', typeof content === 'string' ? Buffer.from(content, 'utf8') : content, name);
}

async function createCondition(body: object, who: Client = formulator): Promise<number> {
  const res = await who.post('/api/storage-conditions', body);
  expect(res.status, JSON.stringify(res.body)).toBe(201);
  return res.body.condition.id;
}

async function countStored(conditionId: number): Promise<{ logs: number; readings: number }> {
  const [l] = await t.db.select({ n: sql<number>`count(*)` }).from(chamberLogs).where(eq(chamberLogs.conditionId, conditionId));
  const [r] = await t.db
    .select({ n: sql<number>`count(*)` })
    .from(chamberReadings)
    .innerJoin(chamberLogs, eq(chamberLogs.id, chamberReadings.logId))
    .where(eq(chamberLogs.conditionId, conditionId));
  return { logs: Number(l.n), readings: Number(r.n) };
}

/** A minute log from T0 in UTC: `temp(i)` °C, optional RH. */
function minuteLog(n: number, temp: (i: number) => number, rh?: (i: number) => number): string {
  const lines = [rh ? 'Timestamp,Temp (°C),RH (%)' : 'Timestamp,Temp (°C)'];
  for (let i = 0; i < n; i++) {
    const v = temp(i).toFixed(2);
    lines.push(rh ? `${isoZ(T0 + i * MINUTE)},${v},${rh(i).toFixed(1)}` : `${isoZ(T0 + i * MINUTE)},${v}`);
  }
  return `${lines.join('\n')}\n`;
}

const oven45 = { kind: 'constant', name: '45 °C oven', location: 'oven 1', setpointC: 45 };

describe('storage conditions', () => {
  it('creates each kind, with defaults and the computed centrifugal force', async () => {
    const res = await formulator.post('/api/storage-conditions', {
      kind: 'constant',
      name: '25 °C / 60 % RH',
      location: 'climate cabinet',
      setpointC: 25,
      rhPercent: 60,
      preset: 'ICH Q1A(R2) long term 25 °C / 60 % RH',
    });
    expect(res.status).toBe(201);
    // ICH Q1A(R2) 2.1.7.1: ± 2 °C and ± 5 % RH when not given.
    expect(res.body.condition).toMatchObject({ kind: 'constant', setpointC: 25, rhPercent: 60, toleranceC: 2, toleranceRh: 5, active: true, isControl: false, logCount: 0, latestLog: null });

    const cyc = await formulator.post('/api/storage-conditions', { kind: 'cycling', name: 'Freeze-thaw', location: 'freezer + bench', lowC: -10, highC: 25, hoursLow: 24, hoursHigh: 24 });
    expect(cyc.status).toBe(201);
    expect(cyc.body.condition).toMatchObject({ lowC: -10, highC: 25, hoursLow: 24, hoursHigh: 24, setpointC: null });

    const light = await formulator.post('/api/storage-conditions', { kind: 'light', name: 'Window', location: 'south window', lightSource: 'daylight' });
    expect(light.body.condition.lightSource).toBe('daylight');

    const spin = await owner.post('/api/storage-conditions', { kind: 'mechanical', name: 'Centrifuge', rpm: 3000, minutes: 30, radiusCm: 10 });
    expect(spin.status).toBe(201);
    // RCF = 1.118e-5 x 10 cm x 3000² = 1006.2 × g (from memory, as in shared/compute/storage.ts).
    expect(Math.round(spin.body.condition.rcf)).toBe(1006);

    const fridge = await formulator.post('/api/storage-conditions', { kind: 'constant', name: '4 °C control', setpointC: 4, isControl: true });
    expect(fridge.body.condition).toMatchObject({ isControl: true, rhPercent: null, toleranceRh: null });

    const list = await technician.get('/api/storage-conditions');
    expect(list.status).toBe(200);
    const names = list.body.conditions.map((c: { name: string }) => c.name);
    expect(names).toEqual(expect.arrayContaining(['25 °C / 60 % RH', 'Freeze-thaw', 'Window', 'Centrifuge', '4 °C control']));

    const one = await technician.get(`/api/storage-conditions/${cyc.body.condition.id}`);
    expect(one.status).toBe(200);
    expect(one.body).toMatchObject({ condition: { id: cyc.body.condition.id, name: 'Freeze-thaw' }, logs: [] });

    const audits = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'storage_condition'), eq(auditLog.entityId, String(spin.body.condition.id)), eq(auditLog.action, 'create')));
    expect(audits).toHaveLength(1);
    expect(audits[0].newValue).toMatchObject({ kind: 'mechanical', rpm: 3000 });
  });

  it('creates every preset as given', async () => {
    for (const p of STORAGE_PRESETS) {
      const res = await formulator.post('/api/storage-conditions', { ...p.input, name: `Preset ${p.key}` });
      expect(res.status, `${p.key}: ${JSON.stringify(res.body)}`).toBe(201);
    }
  });

  it.each([
    [{ name: 'No kind' }, 'kind'],
    [{ kind: 'warm', name: 'Bad kind' }, 'kind'],
    [{ kind: 'constant', name: 'No setpoint' }, 'setpointC'],
    [{ kind: 'cycling', name: 'No high', lowC: -10, hoursLow: 24, hoursHigh: 24 }, 'highC'],
    [{ kind: 'light', name: 'No source' }, 'lightSource'],
    [{ kind: 'mechanical', name: 'No radius', rpm: 3000, minutes: 30 }, 'radiusCm'],
    [{ kind: 'constant', name: 'Too cold', setpointC: -100 }, 'setpointC'],
    [{ kind: 'constant', name: 'Too hot', setpointC: 300 }, 'setpointC'],
    [{ kind: 'constant', name: 'Wet', setpointC: 25, rhPercent: 120 }, 'rhPercent'],
    [{ kind: 'mechanical', name: 'Still', rpm: 0, minutes: 30, radiusCm: 10 }, 'rpm'],
    [{ kind: 'cycling', name: 'Upside down', lowC: 25, highC: -10, hoursLow: 24, hoursHigh: 24 }, 'highC'],
    [{ kind: 'light', name: 'Mixed', lightSource: 'daylight', setpointC: 20 }, 'setpointC'],
    [{ kind: 'constant', name: '', setpointC: 20 }, 'name'],
  ])('refuses %j naming %s', async (body, field) => {
    const before = await t.db.select({ n: sql<number>`count(*)` }).from(storageConditions);
    const res = await formulator.post('/api/storage-conditions', body);
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation');
    expect(Object.keys(res.body.error.fields)).toContain(field);
    const after = await t.db.select({ n: sql<number>`count(*)` }).from(storageConditions);
    expect(Number(after[0].n)).toBe(Number(before[0].n));
  });

  it('edits a condition with an audit row of what changed', async () => {
    const id = await createCondition({ kind: 'constant', name: '50 °C oven', location: 'oven 2', setpointC: 50 });
    const res = await formulator.put(`/api/storage-conditions/${id}`, { kind: 'constant', name: '50 °C oven', location: 'oven 2, top shelf', setpointC: 50, toleranceC: 1.5 });
    expect(res.status).toBe(200);
    expect(res.body.condition).toMatchObject({ location: 'oven 2, top shelf', toleranceC: 1.5 });
    const [a] = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'storage_condition'), eq(auditLog.entityId, String(id)), eq(auditLog.action, 'update')));
    expect(a.oldValue).toEqual({ location: 'oven 2', toleranceC: 2 });
    expect(a.newValue).toEqual({ location: 'oven 2, top shelf', toleranceC: 1.5 });
    // The kind may change while there is no log.
    const light = await formulator.put(`/api/storage-conditions/${id}`, { kind: 'light', name: 'UV cabinet', lightSource: 'uv_cabinet' });
    expect(light.status).toBe(200);
    expect(light.body.condition).toMatchObject({ kind: 'light', setpointC: null, toleranceC: null, lightSource: 'uv_cabinet' });
  });

  it('deactivates and reactivates (never deletes), with the reason in the audit trail', async () => {
    const id = await createCondition({ kind: 'constant', name: 'Old oven', setpointC: 37 });
    const off = await formulator.patch(`/api/storage-conditions/${id}/active`, { active: false, reason: 'Oven retired' });
    expect(off.status).toBe(200);
    expect(off.body.condition.active).toBe(false);
    const list = await technician.get('/api/storage-conditions');
    expect(list.body.conditions.find((c: { id: number }) => c.id === id)?.active).toBe(false);
    const [a] = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'storage_condition'), eq(auditLog.entityId, String(id)), eq(auditLog.action, 'update')));
    expect(a).toMatchObject({ oldValue: { active: true }, newValue: { active: false }, reason: 'Oven retired' });
    const on = await formulator.patch(`/api/storage-conditions/${id}/active`, { active: true });
    expect(on.body.condition.active).toBe(true);
    expect((await formulator.delete(`/api/storage-conditions/${id}`)).status).toBe(404);
  });

  it('lets technicians read but not write', async () => {
    const id = await createCondition(oven45);
    expect((await technician.get(`/api/storage-conditions/${id}`)).status).toBe(200);
    expect((await technician.post('/api/storage-conditions', oven45)).status).toBe(403);
    expect((await technician.put(`/api/storage-conditions/${id}`, oven45)).status).toBe(403);
    expect((await technician.patch(`/api/storage-conditions/${id}/active`, { active: false })).status).toBe(403);
    const up = await upload(technician, id, minuteLog(10, () => 45));
    expect(up.status).toBe(403);
    expect(await countStored(id)).toEqual({ logs: 0, readings: 0 });
  });

  it("answers 404 to another lab's condition and log ids, exactly as for unknown ids", async () => {
    const id = await createCondition(oven45);
    const logRes = await upload(formulator, id, minuteLog(30, () => 45));
    expect(logRes.status).toBe(201);
    const logId = logRes.body.log.id;
    const foreign = await otherOwner.get(`/api/storage-conditions/${id}`);
    const unknown = await otherOwner.get('/api/storage-conditions/99999999');
    expect(foreign.status).toBe(404);
    expect(foreign.body).toEqual(unknown.body);
    expect((await otherOwner.put(`/api/storage-conditions/${id}`, oven45)).status).toBe(404);
    expect((await otherOwner.patch(`/api/storage-conditions/${id}/active`, { active: false })).status).toBe(404);
    expect((await upload(otherOwner, id, minuteLog(10, () => 45))).status).toBe(404);
    for (const path of ['', '/summary', '/series', '/readings.csv']) {
      expect((await otherOwner.get(`/api/chamber-logs/${logId}${path}`)).status, path).toBe(404);
    }
    const list = await otherOwner.get('/api/storage-conditions');
    expect(list.body.conditions.find((c: { id: number }) => c.id === id)).toBeUndefined();
    expect(await countStored(id)).toEqual({ logs: 1, readings: 30 });
  });
});

describe('chamber logs', () => {
  let ovenId: number;
  let logId: number;
  const N = 20_000;
  // 45 °C with a small wobble; one excursion to 48 °C from minute 10 000 to 10 059 (60 minutes out).
  const temp = (i: number) => (i >= 10_000 && i < 10_060 ? 48 : 45 + 0.3 * Math.sin(i / 200));

  beforeAll(async () => {
    ovenId = await createCondition(oven45);
  });

  it('uploads a 20 000-row log, stores every reading and the whole-log summary', async () => {
    const started = performance.now();
    const res = await upload(formulator, ovenId, minuteLog(N, temp), {}, 'oven1-january.csv');
    const seconds = (performance.now() - started) / 1000;
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    console.info(`20 000-row upload: ${seconds.toFixed(1)} s (speed goals: npm run bench)`);
    logId = res.body.log.id;
    const s = res.body.log.summary;
    expect(res.body.log).toMatchObject({ fileName: 'oven1-january.csv', readingCount: N, sourceUnit: 'C', firstAt: new Date(T0).toISOString() });
    expect(s.count).toBe(N);
    expect(s.maxC).toBe(48);
    expect(s.band).toMatchObject({ rule: 'setpoint', setpointC: 45, toleranceC: 2 });
    // Time-weighted: 60 intervals of one minute start at an out-of-tolerance reading.
    expect(s.hoursOutOfTolerance).toBeCloseTo(1, 9);
    expect(s.excursionCount).toBe(1);
    expect(s.excursions[0]).toMatchObject({ start: new Date(T0 + 10_000 * MINUTE).toISOString(), end: new Date(T0 + 10_060 * MINUTE).toISOString(), peak: 48, ongoing: false });
    expect(s.source).toMatchObject({ unit: 'C', unitFrom: 'header', delimiter: ',' });
    expect(await countStored(ovenId)).toEqual({ logs: 1, readings: N });
    const [a] = await t.db.select().from(auditLog).where(and(eq(auditLog.entity, 'chamber_log'), eq(auditLog.entityId, String(logId))));
    expect(a).toMatchObject({ action: 'import', newValue: { readingCount: N, fileName: 'oven1-january.csv' } });

    const cond = await technician.get(`/api/storage-conditions/${ovenId}`);
    expect(cond.body.condition.latestLog).toMatchObject({ id: logId, excursionCount: 1 });
    expect(cond.body.condition.latestLog.hoursOutOfTolerance).toBeCloseTo(1, 9);
    expect(cond.body.logs).toHaveLength(1);
    const list = await technician.get('/api/storage-conditions');
    expect(list.body.conditions.find((c: { id: number }) => c.id === ovenId).latestLog.id).toBe(logId);
  });

  it('reads one log back, and summarises a sub-period from the stored readings', async () => {
    const one = await technician.get(`/api/chamber-logs/${logId}`);
    expect(one.status).toBe(200);
    expect(one.body.log).toMatchObject({ id: logId, condition: { id: ovenId, name: '45 °C oven' }, summary: { count: N } });

    // Minutes 9 000 to 10 999 inclusive: 2 000 readings, the whole excursion inside.
    const from = new Date(T0 + 9_000 * MINUTE).toISOString();
    const to = new Date(T0 + 10_999 * MINUTE).toISOString();
    const res = await technician.get(`/api/chamber-logs/${logId}/summary?from=${from}&to=${to}`);
    expect(res.status).toBe(200);
    const s = res.body.summary;
    expect(s.count).toBe(2000);
    expect(s.first).toBe(from);
    expect(s.last).toBe(to);
    expect(s.hoursOutOfTolerance).toBeCloseTo(1, 9);
    const expected = Array.from({ length: 2000 }, (_, k) => Number(temp(9000 + k).toFixed(2)));
    expect(s.meanC).toBeCloseTo(expected.reduce((x, y) => x + y, 0) / 2000, 9);
    expect(s.mktC).toBeCloseTo(meanKineticTemperature(expected), 9);
    expect(s.minC).toBe(Math.min(...expected));

    // A period without the excursion; times without offset are in the lab's zone (Europe/Berlin, UTC+1 in January).
    const before = await technician.get(`/api/chamber-logs/${logId}/summary?from=2026-01-05T01:00&to=2026-01-05T02:59`);
    expect(before.body.summary).toMatchObject({ count: 120, hoursOutOfTolerance: 0, excursionCount: 0, first: new Date(T0).toISOString() });

    const bad = await technician.get(`/api/chamber-logs/${logId}/summary?from=soon`);
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields).toHaveProperty('from');
    const reversed = await technician.get(`/api/chamber-logs/${logId}/summary?from=${to}&to=${from}`);
    expect(reversed.status).toBe(400);
    const empty = await technician.get(`/api/chamber-logs/${logId}/summary?from=2030-01-01T00:00:00Z`);
    expect(empty.body.summary).toMatchObject({ count: 0, mktC: null });
  });

  it('gives chart series of at most about 2 000 points, min and max kept', async () => {
    const res = await technician.get(`/api/chamber-logs/${logId}/series`);
    expect(res.status).toBe(200);
    const { temp: points, reduced, readingCount } = res.body.series;
    expect(reduced).toBe(true);
    expect(readingCount).toBe(N);
    expect(points.length).toBeLessThanOrEqual(2000);
    expect(points.length).toBeGreaterThan(1000);
    const values = points.map((p: [number, number | null]) => p[1]).filter((v: number | null) => v !== null);
    expect(Math.max(...values)).toBe(48);
    const times = points.map((p: [number, number]) => p[0]);
    expect([...times].sort((a, b) => a - b)).toEqual(times);
    const small = await technician.get(`/api/chamber-logs/${logId}/series?from=${new Date(T0).toISOString()}&to=${new Date(T0 + 99 * MINUTE).toISOString()}`);
    expect(small.body.series).toMatchObject({ reduced: false, readingCount: 100 });
    expect(small.body.series.temp).toHaveLength(100);
  });

  it('downloads the readings of a period as CSV, full or as charted', async () => {
    const from = new Date(T0).toISOString();
    const to = new Date(T0 + 9 * MINUTE).toISOString();
    const res = await technician.get(`/api/chamber-logs/${logId}/readings.csv?from=${from}&to=${to}`);
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toMatch(/attachment; filename="oven1-january-readings\.csv"/);
    const lines = res.text.trim().split('\r\n');
    expect(lines[0]).toBe('time_utc,time_local (Europe/Berlin),temperature_c,rh_percent');
    expect(lines).toHaveLength(11);
    expect(lines[1]).toBe(`2026-01-05T00:00:00.000Z,2026-01-05 01:00:00,${Number(temp(0).toFixed(2))},`);
    const whole = await technician.get(`/api/chamber-logs/${logId}/readings.csv`);
    expect(whole.text.trim().split('\r\n')).toHaveLength(N + 1);
    const chart = await technician.get(`/api/chamber-logs/${logId}/readings.csv?resolution=chart`);
    const chartLines = chart.text.trim().split('\r\n');
    expect(chartLines.length).toBeLessThanOrEqual(2001);
    expect(chartLines.length).toBeGreaterThan(1000);
  });

  it('gives a constant log a mean kinetic temperature equal to the constant', async () => {
    // Haynes 1971 as given in USP <1160>: for equal T_i, T_mk = (ΔH/R) / (ΔH/(R·T)) = T.
    const id = await createCondition({ kind: 'constant', name: '25 °C room', setpointC: 25 });
    const res = await upload(formulator, id, minuteLog(500, () => 25));
    expect(res.status).toBe(201);
    expect(res.body.log.summary.mktC).toBeCloseTo(25, 9);
    expect(res.body.log.summary).toMatchObject({ minC: 25, maxC: 25, hoursOutOfTolerance: 0 });
  });

  it('reads semicolon files with decimal commas and RH, in the lab time zone', async () => {
    const id = await createCondition({ kind: 'constant', name: '40 °C / 75 % RH', setpointC: 40, rhPercent: 75 });
    const csv = 'Datum/Zeit;Temperatur (°C);Feuchte (%rh)\r\n05.01.2026 08:00;40,2;74,5\r\n05.01.2026 08:10;40,4;81,0\r\n05.01.2026 08:20;39,9;75,5\r\n';
    const res = await upload(formulator, id, csv);
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    const s = res.body.log.summary;
    expect(s).toMatchObject({ count: 3, minC: 39.9, maxC: 40.4, first: '2026-01-05T07:00:00.000Z', last: '2026-01-05T07:20:00.000Z' });
    expect(s.rh).toMatchObject({ count: 3, min: 74.5, max: 81, excursionCount: 1 });
    expect(s.rh.hoursOutOfTolerance).toBeCloseTo(10 / 60, 9);
    expect(s.source).toMatchObject({ delimiter: ';', timeZone: 'Europe/Berlin' });
  });

  it('converts °F from the header, or from the unit field', async () => {
    const id = await createCondition({ kind: 'constant', name: 'US oven', setpointC: 45 });
    // t/°C = (t/°F - 32)/1.8 (NIST SP 811, Appendix B.8, from memory): 113 °F = 45 °C, 114.8 °F = 46 °C.
    const res = await upload(formulator, id, 'Date/Time,Temperature °F\n01/13/2026 08:00 AM,113\n01/13/2026 08:05 AM,114.8\n');
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    expect(res.body.log).toMatchObject({ sourceUnit: 'F', summary: { minC: 45, count: 2, source: { unit: 'F', unitFrom: 'header', dateOrder: 'MDY', dateOrderFrom: 'file' } } });
    expect(res.body.log.summary.maxC).toBeCloseTo(46, 9);
    const viaField = await upload(formulator, id, 'Time,Temperature\n2026-02-01 08:00,113\n', { unit: 'F' });
    expect(viaField.status).toBe(201);
    expect(viaField.body.log.summary).toMatchObject({ minC: 45, source: { unitFrom: 'form' } });
  });

  it('refuses an unknown or missing unit, naming the field unit, and stores nothing', async () => {
    const id = await createCondition({ kind: 'constant', name: 'Unit checks', setpointC: 20 });
    const bad = await upload(formulator, id, 'Time,Temperature\n2026-02-01 08:00,20\n', { unit: 'K' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields).toHaveProperty('unit');
    const missing = await upload(formulator, id, 'Time,Temperature\n2026-02-01 08:00,20\n');
    expect(missing.status).toBe(400);
    expect(missing.body.error.fields.unit).toMatch(/°C or °F/);
    const kelvin = await upload(formulator, id, 'Time,Temp (K)\n2026-02-01 08:00,293\n');
    expect(kelvin.status).toBe(400);
    expect(kelvin.body.error.fields).toHaveProperty('unit');
    expect(await countStored(id)).toEqual({ logs: 0, readings: 0 });
  });

  it('refuses a file with a broken line, naming the line, and stores nothing at all', async () => {
    const id = await createCondition({ kind: 'constant', name: 'Broken log', setpointC: 45 });
    const lines = minuteLog(12_000, () => 45).split('\n');
    lines[1042] = `${isoZ(T0 + 1041 * MINUTE)},abc`; // file line 1043
    const res = await upload(formulator, id, lines.join('\n'));
    expect(res.status).toBe(400);
    expect(res.body.error.message).toContain("line 1043: temperature 'abc' is not a number");
    expect(res.body.error.message).toContain('Nothing was stored');
    expect(res.body.error.fields.file).toBe("line 1043: temperature 'abc' is not a number");
    // Line 11 001 comes after two full insert batches would have been written: still nothing stored.
    const late = minuteLog(12_000, () => 45).split('\n');
    late[11_000] = `${isoZ(T0)},45`;
    const res2 = await upload(formulator, id, late.join('\n'));
    expect(res2.status).toBe(400);
    expect(res2.body.error.fields.file).toMatch(/^line 11001: time '.*' is earlier than '.*' on line 11000/);
    expect(await countStored(id)).toEqual({ logs: 0, readings: 0 });
    const audits = await t.db.select().from(auditLog).where(eq(auditLog.entity, 'chamber_log'));
    expect(audits.every((a) => (a.newValue as { conditionId: number }).conditionId !== id)).toBe(true);
  });

  it('refuses empty files, header-only files, files without a header, and a missing file', async () => {
    const id = await createCondition({ kind: 'constant', name: 'Empty checks', setpointC: 20 });
    const empty = await upload(formulator, id, '');
    expect(empty.status).toBe(400);
    expect(empty.body.error.fields.file).toMatch(/empty/);
    const headerOnly = await upload(formulator, id, 'Time,Temp (°C)\n');
    expect(headerOnly.status).toBe(400);
    expect(headerOnly.body.error.fields.file).toMatch(/header row but no readings/);
    const noHeader = await upload(formulator, id, '2026-01-05 08:00,21\n');
    expect(noHeader.status).toBe(400);
    expect(noHeader.body.error.fields.file).toMatch(/No header row/);
    const none = await formulator.agent.post(`/api/storage-conditions/${id}/logs`).set('X-Keepwell-Request', '1').field('unit', 'C');
    expect(none.status).toBe(400);
    expect(none.body.error.fields.file).toBeTruthy();
    const twoFiles = await formulator.agent
      .post(`/api/storage-conditions/${id}/logs`)
      .set('X-Keepwell-Request', '1')
      .attach('file', Buffer.from('Time,Temp (°C)\n2026-01-05 08:00,21\n'), 'a.csv')
      .attach('file', Buffer.from('Time,Temp (°C)\n2026-01-05 08:00,21\n'), 'b.csv');
    expect(twoFiles.status).toBe(400);
    const badOrder = await upload(formulator, id, 'Time,Temp (°C)\n2026-01-05 08:00,21\n', { dateOrder: 'YMD' });
    expect(badOrder.status).toBe(400);
    expect(badOrder.body.error.fields).toHaveProperty('dateOrder');
    expect(await countStored(id)).toEqual({ logs: 0, readings: 0 });
  });

  it('refuses 50 MB of random bytes as not text (415), stores nothing, and keeps answering', async () => {
    const id = await createCondition({ kind: 'constant', name: 'Noise', setpointC: 20 });
    const noise = randomBytes(50 * 1024 * 1024);
    const res = await upload(formulator, id, noise, {}, 'noise.csv');
    expect([413, 415]).toContain(res.status);
    expect(res.body.error.code).toBe('unsupported_type');
    expect(await countStored(id)).toEqual({ logs: 0, readings: 0 });
    expect((await technician.get(`/api/storage-conditions/${id}`)).status).toBe(200);
  });

  it('refuses logs for a centrifuge, and a kind change once logs exist', async () => {
    const spin = await createCondition({ kind: 'mechanical', name: 'Spin', rpm: 3000, minutes: 30, radiusCm: 10 });
    const res = await upload(formulator, spin, minuteLog(5, () => 20));
    expect(res.status).toBe(422);
    const change = await formulator.put(`/api/storage-conditions/${ovenId}`, { kind: 'light', name: 'Now a window', lightSource: 'daylight' });
    expect(change.status).toBe(409);
    expect(change.body.error.fields).toHaveProperty('kind');
  });

  it('judges a freeze-thaw log against its low-high envelope', async () => {
    const id = await createCondition({ kind: 'cycling', name: 'FT', lowC: -10, highC: 25, hoursLow: 24, hoursHigh: 24 });
    // -10 °C then 25 °C, then one hour at 28 °C (above 25 + 2).
    const res = await upload(formulator, id, minuteLog(180, (i) => (i < 60 ? -10 : i < 120 ? 25 : 28)));
    expect(res.status).toBe(201);
    expect(res.body.log.summary.band).toMatchObject({ rule: 'cycle', lowC: -10, highC: 25, toleranceC: 2 });
    expect(res.body.log.summary.hoursOutOfTolerance).toBeCloseTo(59 / 60, 9);
  });
});

describe('demo storage', () => {
  it('seeds every preset with a location and a month of oven log, judged on the way in', async () => {
    const { seedStorage } = await import('../../server/demo/storage');
    const lab = t.labs[1];
    const ownerId = lab.members[DEMO.otherOwner];
    const ids = await t.db.transaction((tx) => seedStorage(tx, lab.id, ownerId));
    expect(Object.keys(ids).sort()).toEqual(STORAGE_PRESETS.map((p) => p.key).sort());
    const list = await otherOwner.get('/api/storage-conditions');
    expect(list.body.conditions).toHaveLength(STORAGE_PRESETS.length);
    const oven = list.body.conditions.find((c: { id: number }) => c.id === ids['oven-45']);
    expect(oven).toMatchObject({ location: 'oven 1', setpointC: 45, logCount: 1, latestLog: { readingCount: 8640, excursionCount: 1 } });
    expect(oven.latestLog.hoursOutOfTolerance).toBeCloseTo(0.25, 9);
    const spin = list.body.conditions.find((c: { id: number }) => c.id === ids['centrifuge-3000']);
    expect(Math.round(spin.rcf)).toBe(1006);
    const logId = oven.latestLog.id;
    const series = await otherOwner.get(`/api/chamber-logs/${logId}/series`);
    expect(series.body.series).toMatchObject({ reduced: true, readingCount: 8640 });
    const stored = await otherOwner.get(`/api/chamber-logs/${logId}/summary?from=${oven.latestLog.firstAt}&to=${oven.latestLog.lastAt}`);
    expect(stored.body.summary.mktC).toBeCloseTo(oven.latestLog.mktC, 9);
    // The Larkspur lab sees none of it.
    expect((await formulator.get(`/api/chamber-logs/${logId}`)).status).toBe(404);
  });
});
