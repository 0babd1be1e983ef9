/**
 * Storage area, mounted at /api:
 *   GET    /storage-conditions                    list (with each one's latest chamber log)   technician+
 *   POST   /storage-conditions                    create                                      formulator+
 *   GET    /storage-conditions/:id                one, with its chamber logs                  technician+
 *   PUT    /storage-conditions/:id                replace the editable fields                 formulator+
 *   PATCH  /storage-conditions/:id/active         deactivate or reactivate                    formulator+
 *   POST   /storage-conditions/:id/logs           upload a logger CSV (multipart, field file) formulator+
 *   GET    /chamber-logs/:id                      one log with its whole-log summary          technician+
 *   GET    /chamber-logs/:id/summary?from&to      summary of a period                         technician+
 *   GET    /chamber-logs/:id/series?from&to       chart points (at most about 2 000)          technician+
 *   GET    /chamber-logs/:id/readings.csv?from&to&resolution=full|chart                       technician+
 *   GET    /chamber-logs/:id/file                 the CSV as uploaded (from the file store)   technician+
 * Every query is scoped to the member's lab: another lab's ids answer 404 like unknown ids.
 */
import { randomUUID } from 'node:crypto';
import { createReadStream, mkdirSync } from 'node:fs';
import { open, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { and, asc, desc, eq, inArray } from 'drizzle-orm';
import { Router, type Request, type Response } from 'express';
import multer from 'multer';
import { relativeCentrifugalForce } from '../../shared/compute/storage';
import { csvCell, csvLine } from '../../shared/csv';
import {
  MAX_LOG_BYTES,
  chamberLogUploadFields,
  conditionActiveInput,
  conditionInput,
  periodQuery,
  type ChamberLogDetail,
  type LogSummary,
  type StorageCondition,
} from '../../shared/schemas/storage';
import { parsePeriodBound, zoneClock } from '../../shared/zoned-time';
import { requireMember, requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db, DbOrTx } from '../db/client';
import { chamberLogs, storageConditions, users } from '../db/schema';
import { HttpError, conflict, idParam, notFound, parse, unprocessable } from '../http/errors';
import { chamberLogKey, FileMissing, sendStream, type FileStore } from '../files';
import { audit } from '../services/audit';
import { columnsOf } from '../services/storage-conditions';
import { CsvProblem, NotText, SNIFF_BYTES, detectLayout } from '../services/chamber-csv';
import { findImport, findLog, importChamberLog, readingsOf, seriesOf, summarizePeriod, toLogListItem, toLogMeta, utcFormatter } from '../services/chamber-logs';

type ConditionRow = typeof storageConditions.$inferSelect;

const UPLOAD_DIR = join(tmpdir(), 'keepwell-uploads');

const upload = multer({
  storage: multer.diskStorage({
    destination: (_req, _file, cb) => {
      try {
        mkdirSync(UPLOAD_DIR, { recursive: true });
        cb(null, UPLOAD_DIR);
      } catch (err) {
        cb(err as Error, UPLOAD_DIR);
      }
    },
  }),
  limits: { fileSize: MAX_LOG_BYTES, files: 1, fields: 10, parts: 20, fieldSize: 1024 },
}).single('file');

/** Runs multer and turns its errors into answers a lab person understands. */
function receiveUpload(req: Request, res: Response): Promise<void> {
  return new Promise((resolve, reject) => {
    upload(req, res, (err: unknown) => {
      if (!err) return resolve();
      if (err instanceof multer.MulterError) {
        if (err.code === 'LIMIT_FILE_SIZE') {
          return reject(new HttpError(413, 'too_large', `The file is larger than ${MAX_LOG_BYTES / 1024 / 1024} MB`, { file: 'At most 60 MB' }));
        }
        if (err.code === 'LIMIT_UNEXPECTED_FILE' || err.code === 'LIMIT_FILE_COUNT') {
          return reject(new HttpError(400, 'validation', 'Send one CSV file in the field "file"', { file: 'One CSV file in the field "file"' }));
        }
        return reject(new HttpError(400, 'validation', `The upload form is not acceptable (${err.code})`, { _: err.message }));
      }
      reject(new HttpError(400, 'bad_request', 'The upload could not be read as a form with a file'));
    });
  });
}

/** The audit view of a condition: what a person would compare. */
function auditView(c: ConditionRow | ReturnType<typeof columnsOf>) {
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(c)) {
    if (['id', 'labId', 'createdBy', 'createdAt'].includes(k) || v === null) continue;
    out[k] = v;
  }
  return out;
}

function toCondition(c: ConditionRow, logCount: number, latestLog: StorageCondition['latestLog']): StorageCondition {
  return {
    id: c.id,
    name: c.name,
    kind: c.kind,
    location: c.location,
    isControl: c.isControl,
    inUse: c.inUse,
    preset: c.preset,
    notes: c.notes,
    active: c.active,
    createdAt: c.createdAt.toISOString(),
    setpointC: c.setpointC,
    rhPercent: c.rhPercent,
    toleranceC: c.toleranceC,
    toleranceRh: c.toleranceRh,
    lowC: c.lowC,
    highC: c.highC,
    hoursLow: c.hoursLow,
    hoursHigh: c.hoursHigh,
    lightSource: c.lightSource,
    rpm: c.rpm,
    minutes: c.minutes,
    radiusCm: c.radiusCm,
    rcf: c.kind === 'mechanical' && c.rpm != null && c.radiusCm != null ? relativeCentrifugalForce(c.rpm, c.radiusCm) : null,
    logCount,
    latestLog,
  };
}

async function findCondition(db: DbOrTx, labId: number, id: number, lock = false): Promise<ConditionRow> {
  const q = db
    .select()
    .from(storageConditions)
    .where(and(eq(storageConditions.labId, labId), eq(storageConditions.id, id)))
    .limit(1);
  const [row] = lock ? await q.for('update') : await q;
  if (!row) throw notFound('No such storage condition in your lab');
  return row;
}

async function logNames(db: DbOrTx, ids: (number | null)[]): Promise<Map<number, string>> {
  const wanted = [...new Set(ids.filter((x): x is number => x != null))];
  if (!wanted.length) return new Map();
  const rows = await db.select({ id: users.id, name: users.name }).from(users).where(inArray(users.id, wanted));
  return new Map(rows.map((r) => [r.id, r.name]));
}

/** Conditions of the lab with their log counts and latest logs (by the time the log ends). */
async function listConditions(db: DbOrTx, labId: number, ids?: number[]): Promise<StorageCondition[]> {
  const where = ids ? and(eq(storageConditions.labId, labId), inArray(storageConditions.id, ids)) : eq(storageConditions.labId, labId);
  const complete = eq(chamberLogs.importState, 'complete');
  const rows = await db.select().from(storageConditions).where(where).orderBy(desc(storageConditions.active), asc(storageConditions.name));
  if (!rows.length) return [];
  const logs = await db
    .select({ id: chamberLogs.id, conditionId: chamberLogs.conditionId, lastAt: chamberLogs.lastAt })
    .from(chamberLogs)
    .where(and(eq(chamberLogs.labId, labId), inArray(chamberLogs.conditionId, rows.map((r) => r.id)), complete));
  const counts = new Map<number, number>();
  const latestId = new Map<number, { id: number; lastAt: number }>();
  for (const l of logs) {
    counts.set(l.conditionId, (counts.get(l.conditionId) ?? 0) + 1);
    const cur = latestId.get(l.conditionId);
    const t = l.lastAt.getTime();
    if (!cur || t > cur.lastAt || (t === cur.lastAt && l.id > cur.id)) latestId.set(l.conditionId, { id: l.id, lastAt: t });
  }
  const latestIds = [...latestId.values()].map((x) => x.id);
  const latest = latestIds.length
    ? await db.select().from(chamberLogs).where(and(eq(chamberLogs.labId, labId), inArray(chamberLogs.id, latestIds)))
    : [];
  const names = await logNames(db, latest.map((l) => l.uploadedBy));
  const byCondition = new Map(latest.map((l) => [l.conditionId, toLogListItem(l, l.uploadedBy ? (names.get(l.uploadedBy) ?? null) : null)]));
  return rows.map((r) => toCondition(r, counts.get(r.id) ?? 0, byCondition.get(r.id) ?? null));
}

/** Reads ?from&to (ISO instants, or lab-local times without an offset). */
function periodOf(req: Request): { from: number | null; to: number | null; resolution: 'full' | 'chart' } {
  const q = parse(periodQuery, { ...(req.query as Record<string, unknown>) }, 'query');
  const tz = member(req).lab.timeZone;
  const bound = (name: 'from' | 'to') => {
    const text = q[name];
    if (text === undefined || text === '') return null;
    const ms = parsePeriodBound(text, tz);
    if (ms === null) {
      throw new HttpError(400, 'validation', `Invalid query: check ${name}`, {
        [name]: 'A date and time such as 2026-03-25T14:00 (lab time) or 2026-03-25T13:00:00Z',
      });
    }
    return ms;
  };
  const from = bound('from');
  let to = bound('to');
  // A bare date as the end means the whole of that day.
  if (to !== null && q.to && /^\d{4}-\d{2}-\d{2}$/.test(q.to.trim())) {
    to = (parsePeriodBound(nextDay(q.to.trim()), tz) as number) - 1;
  }
  if (from !== null && to !== null && from > to) {
    throw new HttpError(400, 'validation', 'Invalid query: check to', { to: 'The end of the period must not be before its start' });
  }
  return { from, to, resolution: q.resolution ?? 'full' };
}

function nextDay(date: string): string {
  const d = new Date(`${date}T00:00:00Z`);
  d.setUTCDate(d.getUTCDate() + 1);
  return d.toISOString().slice(0, 10);
}

async function logOr404(db: DbOrTx, req: Request) {
  const me = member(req);
  const log = await findLog(db, me.labId, idParam(req.params.id));
  if (!log) throw notFound('No such chamber log in your lab');
  return log;
}

/** Four decimals for CSV output (readings converted from °F carry long binary fractions). */
const round4 = (x: number) => Math.round(x * 1e4) / 1e4;

/** A file name safe for Content-Disposition. */
function downloadName(base: string): string {
  return base.replace(/\.[A-Za-z0-9]{1,5}$/, '').replace(/[^A-Za-z0-9._-]+/g, '-').slice(0, 80) || 'chamber-log';
}

/** Keeps the client's file name printable and short. */
function cleanFileName(name: string | undefined): string {
  // eslint-disable-next-line no-control-regex
  const s = (name ?? '').replace(/[\u0000-\u001f\u007f]/g, '').replace(/^.*[\\/]/, '').trim();
  return (s || 'chamber-log.csv').slice(0, 200);
}

export function storageRoutes(db: Db, files: FileStore): Router {
  const r = Router();

  // ------------------------------------------------------------ conditions

  r.get('/storage-conditions', requireMember, async (req, res) => {
    const me = member(req);
    res.json({ conditions: await listConditions(db, me.labId) });
  });

  r.post('/storage-conditions', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    const input = parse(conditionInput, req.body);
    const values = columnsOf(input);
    const id = await db.transaction(async (tx) => {
      const [{ id }] = await tx
        .insert(storageConditions)
        .values({ ...values, labId: me.labId, createdBy: me.id })
        .$returningId();
      await audit(tx, { labId: me.labId, userId: me.id, action: 'create', entity: 'storage_condition', entityId: id, newValue: auditView(values) });
      return id;
    });
    const [condition] = await listConditions(db, me.labId, [id]);
    res.status(201).json({ condition });
  });

  r.get('/storage-conditions/:id', requireMember, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    await findCondition(db, me.labId, id);
    const [condition] = await listConditions(db, me.labId, [id]);
    const logs = await db
      .select()
      .from(chamberLogs)
      .where(and(eq(chamberLogs.labId, me.labId), eq(chamberLogs.conditionId, id), eq(chamberLogs.importState, 'complete')))
      .orderBy(desc(chamberLogs.lastAt), desc(chamberLogs.id));
    const names = await logNames(db, logs.map((l) => l.uploadedBy));
    res.json({
      condition,
      logs: logs.map((l) => toLogListItem(l, l.uploadedBy ? (names.get(l.uploadedBy) ?? null) : null)),
    });
  });

  r.put('/storage-conditions/:id', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(conditionInput, req.body);
    const values = columnsOf(input);
    await db.transaction(async (tx) => {
      const before = await findCondition(tx, me.labId, id, true);
      if (before.kind !== values.kind) {
        const [hasLog] = await tx
          .select({ id: chamberLogs.id })
          .from(chamberLogs)
          .where(and(eq(chamberLogs.labId, me.labId), eq(chamberLogs.conditionId, id)))
          .limit(1);
        if (hasLog) {
          throw conflict('This condition has chamber logs, so its kind cannot change: create a new condition instead', {
            kind: 'Cannot change once chamber logs exist',
          });
        }
      }
      const changed = (Object.keys(values) as (keyof typeof values)[]).filter((k) => before[k] !== values[k]);
      if (!changed.length) return;
      const oldView = Object.fromEntries(changed.map((k) => [k, before[k]]));
      const newView = Object.fromEntries(changed.map((k) => [k, values[k]]));
      await tx.update(storageConditions).set(values).where(and(eq(storageConditions.labId, me.labId), eq(storageConditions.id, id)));
      await audit(tx, { labId: me.labId, userId: me.id, action: 'update', entity: 'storage_condition', entityId: id, oldValue: oldView, newValue: newView });
    });
    const [condition] = await listConditions(db, me.labId, [id]);
    res.json({ condition });
  });

  r.patch('/storage-conditions/:id/active', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(conditionActiveInput, req.body);
    await db.transaction(async (tx) => {
      const before = await findCondition(tx, me.labId, id, true);
      if (before.active === input.active) return;
      await tx
        .update(storageConditions)
        .set({ active: input.active })
        .where(and(eq(storageConditions.labId, me.labId), eq(storageConditions.id, id)));
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'storage_condition',
        entityId: id,
        oldValue: { active: before.active },
        newValue: { active: input.active },
        reason: input.reason ?? null,
      });
    });
    const [condition] = await listConditions(db, me.labId, [id]);
    res.json({ condition });
  });

  // ------------------------------------------------------------ chamber logs

  r.post('/storage-conditions/:id/logs', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    const condition = await findCondition(db, me.labId, idParam(req.params.id));
    if (condition.kind === 'mechanical') {
      throw unprocessable('A centrifuge run has no chamber log: upload logs to ovens, fridges, cabinets, freeze-thaw or light conditions');
    }
    await receiveUpload(req, res);
    const file = req.file;
    try {
      const fields = parse(chamberLogUploadFields, { ...(req.body ?? {}) }, 'form');
      if (!file) throw new HttpError(400, 'validation', 'Choose a CSV file exported by the data logger', { file: 'Choose a CSV file' });
      if (file.size === 0) throw new HttpError(400, 'validation', 'The file is empty', { file: 'The file is empty' });

      const fh = await open(file.path, 'r');
      let head: Buffer;
      try {
        const buf = Buffer.alloc(Math.min(SNIFF_BYTES, file.size));
        const { bytesRead } = await fh.read(buf, 0, buf.length, 0);
        head = buf.subarray(0, bytesRead);
      } finally {
        await fh.close();
      }

      const fileName = cleanFileName(file.originalname);
      const importId = fields.importId ?? randomUUID();
      // A retry of an upload that completed: the log it made, nothing imported twice.
      const done = fields.importId ? await findImport(db, me.labId, importId) : null;
      if (done?.importState === 'complete') {
        if (done.conditionId !== condition.id) throw conflict('This import id belongs to another upload', { importId: 'Already used' });
        res.status(200).json({ log: detailOf(done, condition, me.name) });
        return;
      }
      const key = chamberLogKey(me.labId, importId);
      let stored = false;
      const logId = await (async () => {
        try {
          const layout = detectLayout(head, fields);
          // The original file goes to the file store first: a store that is down answers 503 and nothing is imported.
          await files.put(key, createReadStream(file.path), { size: file.size, contentType: 'text/csv' });
          stored = true;
          return await importChamberLog(db, {
            importId,
            labId: me.labId,
            userId: me.id,
            condition,
            filePath: file.path,
            fileName,
            layout,
            timeZone: me.lab.timeZone,
          });
        } catch (err) {
          // A 409 means another request is importing this same upload: its file stays.
          if (stored && !(err instanceof HttpError && err.status === 409)) await files.delete(key).catch(() => undefined);
          if (err instanceof NotText) throw new HttpError(415, 'unsupported_type', `${err.message}. Export the log as CSV text.`, { file: err.message });
          if (err instanceof CsvProblem) {
            const whole = `${err.message}. Nothing was stored.`;
            throw new HttpError(400, 'validation', err.field === 'file' ? `The file could not be read: ${whole}` : whole, { [err.field]: err.message });
          }
          throw err;
        }
      })();
      const log = await findLog(db, me.labId, logId);
      res.status(201).json({ log: detailOf(log!, condition, me.name) });
    } finally {
      if (file?.path) await rm(file.path, { force: true });
    }
  });

  function detailOf(l: NonNullable<Awaited<ReturnType<typeof findLog>>>, c: ConditionRow, uploadedBy: string | null): ChamberLogDetail {
    return {
      ...toLogMeta(l, uploadedBy),
      summary: l.summary as LogSummary,
      condition: { id: c.id, name: c.name, kind: c.kind, location: c.location, active: c.active },
    };
  }

  /** The file as uploaded, streamed from the file store after the lab check. */
  r.get('/chamber-logs/:id/file', requireMember, async (req, res) => {
    const log = await logOr404(db, req);
    if (!log.importId) throw notFound('This log was uploaded before original files were kept');
    let stored;
    try {
      stored = await files.get(chamberLogKey(log.labId, log.importId));
    } catch (err) {
      if (err instanceof FileMissing) throw notFound('The original file is missing from storage');
      throw err;
    }
    res.set({
      'Content-Type': 'text/csv; charset=utf-8',
      'Content-Length': String(stored.size),
      'Content-Disposition': `attachment; filename="${downloadName(log.fileName)}.csv"`,
      'Content-Security-Policy': "default-src 'none'; sandbox",
    });
    await sendStream(res, stored.body);
  });

  r.get('/chamber-logs/:id', requireMember, async (req, res) => {
    const me = member(req);
    const log = await logOr404(db, req);
    const condition = await findCondition(db, me.labId, log.conditionId);
    const names = await logNames(db, [log.uploadedBy]);
    res.json({ log: detailOf(log, condition, log.uploadedBy ? (names.get(log.uploadedBy) ?? null) : null) });
  });

  r.get('/chamber-logs/:id/summary', requireMember, async (req, res) => {
    const log = await logOr404(db, req);
    const { from, to } = periodOf(req);
    const summary = from === null && to === null ? (log.summary as LogSummary) : await summarizePeriod(db, log, from, to);
    res.json({ summary: { ...summary, source: undefined }, from: from === null ? null : new Date(from).toISOString(), to: to === null ? null : new Date(to).toISOString() });
  });

  r.get('/chamber-logs/:id/series', requireMember, async (req, res) => {
    const log = await logOr404(db, req);
    const { from, to } = periodOf(req);
    res.json({ series: await seriesOf(db, log, from, to) });
  });

  r.get('/chamber-logs/:id/readings.csv', requireMember, async (req, res) => {
    const me = member(req);
    const log = await logOr404(db, req);
    const { from, to, resolution } = periodOf(req);
    const tz = me.lab.timeZone;
    const name = `${downloadName(log.fileName)}-${resolution === 'chart' ? 'chart' : 'readings'}.csv`;
    res.set('Content-Type', 'text/csv; charset=utf-8');
    res.set('Content-Disposition', `attachment; filename="${name}"`);
    const head = csvLine(['time_utc', `time_local (${tz})`, 'temperature_c', 'rh_percent']);
    const utc = utcFormatter(true);
    const local = utcFormatter();
    const clock = zoneClock(tz);
    const line = (t: number, temp: number | null, rh: number | null) =>
      `${utc(t)},${local(clock.toWallClock(t)).slice(0, 19)},${csvCell(temp == null ? null : round4(temp))},${csvCell(rh == null ? null : round4(rh))}\r\n`;
    if (resolution === 'chart') {
      const s = await seriesOf(db, log, from, to);
      const rows = new Map<number, [number | null, number | null]>();
      for (const [t, v] of s.temp) if (v !== null) rows.set(t, [v, null]);
      for (const [t, v] of s.rh ?? []) if (v !== null) rows.set(t, [rows.get(t)?.[0] ?? null, v]);
      const body = [...rows.entries()].sort((a, b) => a[0] - b[0]).map(([t, [temp, rh]]) => line(t, temp, rh));
      res.send(head + body.join(''));
      return;
    }
    // Full resolution: stream chunk by chunk, waiting when the client reads slowly.
    res.write(head);
    for await (const chunk of readingsOf(db, log, from, to)) {
      let text = '';
      for (const r of chunk) text += line(r.at, r.tempC, r.rh);
      if (!res.write(text)) {
        await new Promise<void>((resolve) => {
          const done = () => {
            res.off('drain', done);
            res.off('close', done);
            resolve();
          };
          res.on('drain', done);
          res.on('close', done);
        });
      }
      if (res.destroyed) return;
    }
    res.end();
  });

  return r;
}
