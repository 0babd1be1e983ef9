import { and, desc, eq, gte, lt, sql } from 'drizzle-orm';
import { Router, type RequestHandler } from 'express';
import multer from 'multer';
import { addDays } from '../../shared/compute/schedule';
import { csvLine } from '../../shared/csv';
import { auditQuery, correctionInput, recordInput, voidInput, type AuditRow } from '../../shared/schemas/records';
import { requireMember, requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import { auditLog, checkpoints, photos, samples, users } from '../db/schema';
import { HttpError, idParam, notFound, parse } from '../http/errors';
import { FileMissing, photoKey, sendStream, type FileStore } from '../files';
import { describeAuditRows, type AuditWords, type LabFormat } from '../services/audit-text';
import { planImport, previewOf, runImport } from '../services/import';
import { attachmentHeader, checkImages, ensureDisplayCopy, PHOTO_LIMITS, photosFor, savePhotos } from '../services/photos';
import { isDuplicateKey, photoClientId, photoSent } from '../services/recording/device';
import { offlineCopy } from '../services/recording/offline';
import { checkpointOpen, correctObservation, observationHistory, recordObservations, recordSheet, sampleAtCheckpoint, voidObservation, type Recorder } from '../services/records';
import { todayIn } from '../services/studies';
import { studyExists } from '../services/study/detail';

const recorder = (u: Express.User): Recorder => ({ id: u.id, labId: u.labId, role: u.role });

/** Multer errors as our 4xx answers: 413 for too large or too many, 400 for a broken upload. */
function upload(field: string, opts: { maxFiles: number; fileSize: number }): RequestHandler {
  const m = multer({
    storage: multer.memoryStorage(),
    limits: { fileSize: opts.fileSize, files: opts.maxFiles, fields: 10, parts: opts.maxFiles + 10, fieldSize: 64 * 1024 },
  }).array(field, opts.maxFiles);
  return (req, res, next) => {
    m(req, res, (err: unknown) => {
      if (!err) return next();
      if (err instanceof multer.MulterError) {
        const tooBig = err.code === 'LIMIT_FILE_SIZE';
        const tooMany = err.code === 'LIMIT_FILE_COUNT' || err.code === 'LIMIT_PART_COUNT';
        if (tooBig) return next(new HttpError(413, 'too_large', `Each file may be at most ${opts.fileSize / 1024 / 1024} MB`, { [field]: 'File too large' }));
        // A file in another field, or more files than the field takes (multer names both the same).
        if (err.code === 'LIMIT_UNEXPECTED_FILE' && err.field !== field) {
          return next(new HttpError(400, 'validation', `Send the file(s) in the field "${field}", not "${String(err.field ?? '').slice(0, 60)}"`, { [field]: `Expected the field "${field}"` }));
        }
        if (err.code === 'LIMIT_UNEXPECTED_FILE') return next(new HttpError(413, 'too_large', `At most ${opts.maxFiles} file(s) per upload, in the "${field}" field`, { [field]: 'Too many files' }));
        if (tooMany) return next(new HttpError(413, 'too_large', `At most ${opts.maxFiles} file(s) per upload, in the "${field}" field`, { [field]: 'Too many files' }));
        return next(new HttpError(400, 'bad_request', `Upload refused: ${err.message}`, { [field]: err.message }));
      }
      // busboy: truncated or malformed multipart body
      next(new HttpError(400, 'bad_request', 'The upload was cut short or is malformed; try again', { [field]: 'Incomplete upload' }));
    });
  };
}

/** Mounted at /api: recording, corrections, photos, bulk import and the audit trail. */
export function recordRoutes(db: Db, fileStore: FileStore): Router {
  const r = Router();

  // The copy a device keeps to work offline: the Bench for 7 days and each of its Record sheets.
  r.get('/bench/offline', requireMember, async (req, res) => {
    const me = member(req);
    res.json(await offlineCopy(db, me.labId, me.id, todayIn(me.lab.timeZone)));
  });

  r.get('/samples/:code/checkpoints/:checkpointId', requireMember, async (req, res) => {
    const me = member(req);
    res.json({ sheet: await recordSheet(db, me.labId, String(req.params.code), idParam(req.params.checkpointId), todayIn(me.lab.timeZone)) });
  });

  r.put('/samples/:code/checkpoints/:checkpointId/observations', requireMember, async (req, res) => {
    const me = member(req);
    const input = parse(recordInput, req.body);
    const code = String(req.params.code);
    const checkpointId = idParam(req.params.checkpointId);
    const today = todayIn(me.lab.timeZone);
    const { replayed, read } = await recordObservations(db, recorder(me), code, checkpointId, input.entries, today, input.allowEarly ?? false, input);
    res.json({ sheet: await recordSheet(db, me.labId, code, checkpointId, today, read), replayed });
  });

  r.post('/observations/:id/corrections', requireMember, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(correctionInput, req.body);
    await correctObservation(db, recorder(me), id, input);
    res.json({ history: await observationHistory(db, me.labId, id) });
  });

  r.post('/observations/:id/void', requireMember, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const { reason } = parse(voidInput, req.body);
    await voidObservation(db, recorder(me), id, reason);
    res.json({ history: await observationHistory(db, me.labId, id) });
  });

  r.get('/observations/:id/history', requireMember, async (req, res) => {
    const me = member(req);
    res.json({ history: await observationHistory(db, me.labId, idParam(req.params.id)) });
  });

  // ---------------------------------------------------------------- photos
  r.post(
    '/samples/:code/checkpoints/:checkpointId/photos',
    requireMember,
    upload('photos', { maxFiles: PHOTO_LIMITS.files, fileSize: PHOTO_LIMITS.fileSize }),
    async (req, res) => {
      const me = member(req);
      const checkpointId = idParam(req.params.checkpointId);
      const code = String(req.params.code).toUpperCase();
      const [sample] = await db.select().from(samples).where(and(eq(samples.labId, me.labId), eq(samples.code, code)));
      if (!sample) throw notFound('No such sample in your lab');
      const [cp] = await db
        .select({ cp: checkpoints, status: sql<string>`(SELECT status FROM studies WHERE id = ${checkpoints.studyId})` })
        .from(checkpoints)
        .where(and(eq(checkpoints.labId, me.labId), eq(checkpoints.id, checkpointId)));
      if (!cp || !(await sampleAtCheckpoint(db, sample, cp.cp))) throw notFound('This sample has no such checkpoint');
      // From a device's outbox: one photo per client id; a resend answers the photos as they are.
      const clientId = photoClientId(req.body);
      if (clientId && (await photoSent(db, me.labId, clientId))) {
        res.status(200).json({ photos: await photosFor(db, me.labId, { sampleId: sample.id, checkpointId }), replayed: true });
        return;
      }
      const closed = checkpointOpen({ status: cp.status }, cp.cp, todayIn(me.lab.timeZone), me.role !== 'technician');
      if (closed) throw new HttpError(409, 'conflict', closed);
      const files = (req.files as Express.Multer.File[] | undefined) ?? [];
      if (!files.length) throw new HttpError(400, 'validation', 'Choose at least one photo', { photos: 'No photo chosen' });
      if (clientId && files.length > 1) throw new HttpError(400, 'validation', 'One photo per client id', { photos: 'One photo per client id' });
      const checked = await checkImages(files);
      try {
        await savePhotos(db, fileStore, me, { studyId: sample.studyId, sampleId: sample.id, checkpointId, sampleCode: sample.code, checkpointLabel: cp.cp.label, clientId }, checked);
      } catch (err) {
        // The same photo sent twice at once: the second answers as a resend (its files were removed).
        if (!clientId || !isDuplicateKey(err)) throw err;
        res.status(200).json({ photos: await photosFor(db, me.labId, { sampleId: sample.id, checkpointId }), replayed: true });
        return;
      }
      res.status(201).json({ photos: await photosFor(db, me.labId, { sampleId: sample.id, checkpointId }) });
    },
  );

  /**
   * The display copy (made now for photos stored before display copies existed), the thumbnail,
   * or the original as a download. Never shown inline from the original: it may carry EXIF/GPS.
   */
  const servePhoto = (which: 'display' | 'thumb' | 'original'): RequestHandler => async (req, res) => {
    const me = member(req);
    const [p] = await db.select().from(photos).where(and(eq(photos.labId, me.labId), eq(photos.id, idParam(req.params.id))));
    if (!p) throw notFound('No such photo in your lab');
    let stored;
    try {
      const key = which === 'display' ? await ensureDisplayCopy(fileStore, p.storedName) : photoKey(which === 'thumb' ? p.thumbName : p.storedName);
      stored = await fileStore.get(key);
    } catch (err) {
      if (err instanceof FileMissing) throw notFound('The photo file is missing from storage');
      throw err;
    }
    const type = which === 'original' ? p.mime : 'image/webp';
    res.set({
      'Content-Type': type,
      'Content-Length': String(stored.size),
      'Content-Disposition': which === 'original' ? attachmentHeader(p.originalName, p.mime) : 'inline',
      'Content-Security-Policy': "default-src 'none'; sandbox",
      'Cache-Control': 'private, max-age=86400',
    });
    await sendStream(res, stored.body);
  };
  r.get('/photos/:id', requireMember, servePhoto('display'));
  r.get('/photos/:id/thumb', requireMember, servePhoto('thumb'));
  r.get('/photos/:id/original', requireMember, servePhoto('original'));

  r.get('/studies/:id/photos', requireMember, async (req, res) => {
    const me = member(req);
    const studyId = idParam(req.params.id);
    if (!(await studyExists(db, me.labId, studyId))) throw notFound('No such study in your lab');
    const list = await photosFor(db, me.labId, { studyId });
    res.json({ photos: list });
  });

  // ---------------------------------------------------------------- bulk import
  const importUpload = upload('file', { maxFiles: 1, fileSize: 5 * 1024 * 1024 });
  const csvOf = (req: Express.Request) => {
    const f = (req.files as Express.Multer.File[] | undefined)?.[0];
    if (!f) throw new HttpError(400, 'validation', 'Choose a CSV file', { file: 'No file chosen' });
    if (f.buffer.subarray(0, 65536).includes(0)) throw new HttpError(415, 'unsupported_type', 'This is not a text (CSV) file', { file: 'Not a CSV file' });
    return f.buffer.toString('utf8');
  };
  r.post('/studies/:id/import/preview', requireRole('formulator'), importUpload, async (req, res) => {
    const me = member(req);
    const plan = await planImport(db, me.labId, idParam(req.params.id), me.lab.timeZone, csvOf(req));
    res.json(previewOf(plan));
  });
  r.post('/studies/:id/import', requireRole('formulator'), importUpload, async (req, res) => {
    const me = member(req);
    const plan = await planImport(db, me.labId, idParam(req.params.id), me.lab.timeZone, csvOf(req));
    const imported = await runImport(db, recorder(me), plan, todayIn(me.lab.timeZone));
    res.status(201).json({ imported });
  });

  // ---------------------------------------------------------------- audit trail (owners)
  const auditRows = async (labId: number, lab: LabFormat, q: ReturnType<typeof auditQuery.parse>, limit: number, offset: number) => {
    const conds = [eq(auditLog.labId, labId)];
    if (q.studyId) conds.push(eq(auditLog.studyId, q.studyId));
    if (q.userId) conds.push(eq(auditLog.userId, q.userId));
    if (q.from) conds.push(gte(auditLog.at, new Date(`${q.from}T00:00:00Z`)));
    if (q.to) conds.push(lt(auditLog.at, new Date(`${addDays(q.to, 1)}T00:00:00Z`)));
    const rows = await db
      .select({ a: auditLog, user: users.name })
      .from(auditLog)
      .leftJoin(users, eq(users.id, auditLog.userId))
      .where(and(...conds))
      .orderBy(desc(auditLog.at), desc(auditLog.id))
      .limit(limit)
      .offset(offset);
    // Sentences with their names looked up per 1000 rows (a page is 100; the CSV takes them all).
    const words: AuditWords[] = [];
    for (let i = 0; i < rows.length; i += 1000) words.push(...(await describeAuditRows(db, labId, lab, rows.slice(i, i + 1000).map((r) => r.a))));
    return rows.map(({ a, user }, i): AuditRow => ({
      id: a.id,
      at: a.at.toISOString(),
      user,
      action: a.action,
      entity: a.entity,
      entityId: a.entityId,
      oldValue: a.oldValue,
      newValue: a.newValue,
      reason: a.reason,
      actionLabel: words[i].actionLabel,
      sentence: words[i].sentence,
    }));
  };

  /** The audit query, with its study and member checked against the lab: another lab's ids are not found. */
  const auditQueryOf = async (query: unknown, labId: number) => {
    const q = parse(auditQuery, query, 'query');
    if (q.studyId && !(await studyExists(db, labId, q.studyId))) throw notFound('No such study in your lab');
    if (q.userId) {
      const [u] = await db.select({ id: users.id }).from(users).where(and(eq(users.labId, labId), eq(users.id, q.userId)));
      if (!u) throw notFound('No such member in your lab');
    }
    return q;
  };

  r.get('/audit', requireRole('owner'), async (req, res) => {
    const me = member(req);
    const q = await auditQueryOf(req.query, me.labId);
    const pageSize = 100;
    const rows = await auditRows(me.labId, me.lab, q, pageSize + 1, (q.page - 1) * pageSize);
    res.json({ rows: rows.slice(0, pageSize), page: q.page, more: rows.length > pageSize });
  });

  r.get('/audit.csv', requireRole('owner'), async (req, res) => {
    const me = member(req);
    const q = await auditQueryOf(req.query, me.labId);
    const rows = await auditRows(me.labId, me.lab, q, 100_000, 0);
    res.set({ 'Content-Type': 'text/csv; charset=utf-8', 'Content-Disposition': 'attachment; filename="audit-trail.csv"' });
    // The raw columns as stored, then the entry in words.
    res.write('time_utc,who,action,entity,entity_id,old_value,new_value,reason,action_label,sentence\r\n');
    for (const r of rows) res.write(csvLine([r.at, r.user, r.action, r.entity, r.entityId, r.oldValue, r.newValue, r.reason, r.actionLabel, r.sentence]));
    res.end();
  });

  return r;
}
