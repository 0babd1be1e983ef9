/**
 * Files through the file store, run twice by `npm test`: with the folder (project api) and with an S3
 * bucket in s3rver (project api-s3). Photos and chamber-log CSVs are kept in the store and served only
 * through the API after the lab check; a missing object answers 404; a store that is down answers 503
 * on file routes while the rest of the app keeps working; a chamber-log upload sent again with its
 * import id is clean.
 */
import { createHash, randomUUID } from 'node:crypto';
import { and, eq, sql } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app';
import { loadConfig } from '../../server/config';
import { chamberLogs, chamberReadings, photos } from '../../server/db/schema';
import { chamberLogKey, photoKey, s3Store } from '../../server/files';
import { createLogger } from '../../server/log';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { Client, bytesOf, createTestApp, DEMO, DEMO_PASSWORD, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';

let t: TestApp;
let technician: Client, formulator: Client, otherOwner: Client;
let photoUrl: string;
let conditionId: number;

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');
const jpeg = () => sharp({ create: { width: 320, height: 240, channels: 3, background: '#b0a090' } }).jpeg().toBuffer();
const keys = async (prefix: string) => {
  const out: string[] = [];
  for await (const o of t.files.list(prefix)) out.push(o.key);
  return out.sort();
};

/** 3 000 minute readings at 25 °C from 2026-01-05 00:00 UTC. */
const CSV = ['Timestamp,Temp (°C)', ...Array.from({ length: 3000 }, (_, i) => `${new Date(Date.UTC(2026, 0, 5) + i * 60_000).toISOString()},25.00`)].join('\n') + '\n';
const uploadLog = (who: Client, content: string, fields: Record<string, string> = {}) => {
  const req = who.agent.post(`/api/storage-conditions/${conditionId}/logs`).set('X-Keepwell-Request', '1');
  for (const [k, v] of Object.entries(fields)) req.field(k, v);
  return req.attach('file', Buffer.from(content), 'logger.csv');
};
const logCount = async () => Number((await t.db.select({ n: sql<number>`count(*)` }).from(chamberLogs).where(eq(chamberLogs.conditionId, conditionId)))[0].n);

beforeAll(async () => {
  t = await createTestApp();
  [technician, formulator, otherOwner] = await Promise.all([t.signIn(DEMO.technician), t.signIn(DEMO.formulator), t.signIn(DEMO.otherOwner)]);
  const cat = await makeCatalogue(t.db, t.labs[0].id);
  const draft = await formulator.post('/api/studies', planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -7)));
  const study = (await formulator.post(`/api/studies/${draft.body.study.id}/start`)).body.study;
  const oven = study.conditions[1].id;
  const w1 = study.checkpoints.find((c: { label: string; studyConditionId: number | null }) => c.label === 'Week 1' && c.studyConditionId === oven);
  const sample = study.samples.find((s: { studyConditionId: number | null }) => s.studyConditionId === oven);
  photoUrl = `/api/samples/${sample.code}/checkpoints/${w1.id}/photos`;
  conditionId = (await formulator.post('/api/storage-conditions', { kind: 'constant', name: '25 °C cabinet', location: 'cabinet 2', setpointC: 25 })).body.condition.id;
});
afterAll(async () => t?.close());

describe(`files in the ${process.env.KEEPWELL_TEST_FILES === 's3' ? 'S3 bucket' : 'folder'}`, () => {
  it('keeps a photo, its display copy and thumbnail in the store; another lab gets 404; a missing object 404', async () => {
    const sent = await jpeg();
    const res = await technician.agent.post(photoUrl).set('X-Keepwell-Request', '1').attach('photos', sent, 'jar.jpg');
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    const p = res.body.photos.at(-1);
    const [row] = await t.db.select().from(photos).where(eq(photos.id, p.id));
    const base = row.storedName.replace(/\.jpg$/, '');
    expect(await keys(`photos/${base}`)).toEqual([`photos/${base}.display.webp`, `photos/${base}.jpg`, `photos/${base}.thumb.webp`]);

    const original = await bytesOf(technician, p.originalUrl);
    expect(original.status).toBe(200);
    expect(original.headers['content-length']).toBe(String(sent.length));
    expect(sha256(original.body as Buffer)).toBe(sha256(sent));
    expect((await otherOwner.get(p.originalUrl)).status).toBe(404);

    await t.files.delete(photoKey(row.storedName));
    const gone = await technician.get(p.originalUrl);
    expect(gone.status).toBe(404);
    expect(gone.body.error.message).toBe('The photo file is missing from storage');
    expect(gone.headers['content-disposition']).toBeUndefined();
    // The display copy is still there and still served.
    expect((await bytesOf(technician, p.url)).status).toBe(200);
  });

  it('keeps the uploaded chamber-log CSV, served as uploaded after the lab check', async () => {
    const importId = randomUUID();
    const res = await uploadLog(formulator, CSV, { importId });
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    const id = res.body.log.id;
    expect(await t.files.head(chamberLogKey(t.labs[0].id, importId))).toMatchObject({ size: Buffer.byteLength(CSV) });
    const file = await bytesOf(technician, `/api/chamber-logs/${id}/file`);
    expect(file.status).toBe(200);
    expect(file.headers['content-disposition']).toBe('attachment; filename="logger.csv"');
    expect((file.body as Buffer).toString()).toBe(CSV);
    expect((await otherOwner.get(`/api/chamber-logs/${id}/file`)).status).toBe(404);

    // Sent again with the same import id (a retry after a lost answer): the same log, nothing twice.
    const again = await uploadLog(formulator, CSV, { importId });
    expect(again.status).toBe(200);
    expect(again.body.log.id).toBe(id);
    const [{ n }] = await t.db.select({ n: sql<number>`count(*)` }).from(chamberReadings).where(eq(chamberReadings.logId, id));
    expect(Number(n)).toBe(3000);

    await t.files.delete(chamberLogKey(t.labs[0].id, importId));
    expect((await technician.get(`/api/chamber-logs/${id}/file`)).status).toBe(404);
  });

  it('stores no file and no log when the CSV is refused', async () => {
    const before = { logs: await logCount(), files: await keys('chamber-logs/') };
    const res = await uploadLog(formulator, `${CSV}2026-01-07T02:00:00.000Z,warm\n`);
    expect(res.status).toBe(400);
    expect(await logCount()).toBe(before.logs);
    expect(await keys('chamber-logs/')).toEqual(before.files);
  });

  it('cleans up an import that stopped half-way when it is sent again, and hides it meanwhile', async () => {
    const importId = randomUUID();
    const labId = t.labs[0].id;
    // What a process killed mid-upload leaves: the log row 'importing' and the chunks committed so far.
    const [{ id: partial }] = await t.db
      .insert(chamberLogs)
      .values({ labId, conditionId, fileName: 'logger.csv', sourceUnit: 'C', readingCount: 0, firstAt: new Date(0), lastAt: new Date(0), summary: {}, importId, importState: 'importing' })
      .$returningId();
    await t.db.execute(sql`INSERT INTO chamber_readings (log_id, seq, lab_id, at, temp_c) SELECT ${partial}, seq, lab_id, at, temp_c FROM chamber_readings WHERE lab_id = ${labId} LIMIT 1200`);
    const listed = await technician.get(`/api/storage-conditions/${conditionId}`);
    expect(listed.body.logs.map((l: { id: number }) => l.id)).not.toContain(partial);
    expect((await technician.get(`/api/chamber-logs/${partial}`)).status).toBe(404);

    // Still recent: it may be running elsewhere, so it is left alone.
    expect((await uploadLog(formulator, CSV, { importId })).status).toBe(409);
    await t.db.update(chamberLogs).set({ uploadedAt: new Date(Date.now() - 20 * 60_000) }).where(eq(chamberLogs.id, partial));
    const res = await uploadLog(formulator, CSV, { importId });
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    const [old] = await t.db.select().from(chamberLogs).where(eq(chamberLogs.id, partial));
    expect(old).toBeUndefined();
    const [{ n }] = await t.db.select({ n: sql<number>`count(*)` }).from(chamberReadings).where(eq(chamberReadings.logId, res.body.log.id));
    expect(Number(n)).toBe(3000);
    expect(res.body.log.readingCount).toBe(3000);
  });

  it('answers 503 on file routes while the store is down, and everything else keeps working', async () => {
    const [row] = await t.db.select().from(photos).where(eq(photos.labId, t.labs[0].id)).limit(1);
    // The same app and database, with an object store that does not answer (nothing listens on port 9).
    const down = s3Store({ bucket: 'keepwell-files', endpoint: 'http://127.0.0.1:9', forcePathStyle: true, credentials: { accessKeyId: 'k', secretAccessKey: 's' } });
    const { app, close } = createApp({ db: t.db, pool: t.pool, config: loadConfig({ NODE_ENV: 'test' }), log: createLogger(true), sessionSecret: 'test-secret-that-is-long-enough', serveClient: false, files: down });
    try {
      const c = new Client(app);
      expect((await c.post('/api/auth/sign-in', { email: DEMO.formulator, password: DEMO_PASSWORD })).status).toBe(200);
      for (const path of [`/api/photos/${row.id}`, `/api/photos/${row.id}/original`, `/api/photos/${row.id}/thumb`]) {
        const r = await c.get(path);
        expect(r.status, path).toBe(503);
        expect(r.body.error.code).toBe('unavailable');
        expect(r.headers['retry-after']).toBeDefined();
      }
      const photosBefore = Number((await t.db.select({ n: sql<number>`count(*)` }).from(photos))[0].n);
      const up = await c.agent.post(photoUrl).set('X-Keepwell-Request', '1').attach('photos', await jpeg(), 'jar.jpg');
      expect(up.status).toBe(503);
      expect(Number((await t.db.select({ n: sql<number>`count(*)` }).from(photos))[0].n)).toBe(photosBefore);
      const logsBefore = await logCount();
      expect((await uploadLog(c, CSV)).status).toBe(503);
      expect(await logCount()).toBe(logsBefore);

      // The rest answers as usual.
      expect((await c.get('/api/health')).status).toBe(200);
      expect((await c.get('/api/storage-conditions')).status).toBe(200);
      expect((await c.get(`/api/storage-conditions/${conditionId}`)).status).toBe(200);
      const [log] = await t.db.select().from(chamberLogs).where(and(eq(chamberLogs.conditionId, conditionId), eq(chamberLogs.importState, 'complete'))).limit(1);
      expect((await c.get(`/api/chamber-logs/${log.id}/series`)).status).toBe(200);
    } finally {
      await close();
      down.close?.();
    }
  });
});
