/**
 * The product file: a variant's microbial-risk panel, documents on a variant or a study, and a study's
 * expected vs present documents. Reads: any member. Writes: formulators and owners (the panel and the
 * documents are part of what the owner signs). Another lab's ids answer 404.
 */
import { Router, type RequestHandler } from 'express';
import multer from 'multer';
import { DOCUMENT_MAX_BYTES, documentMeta, riskInput } from '../../shared/schemas/product-file';
import { requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import { FileMissing, sendStream, type FileStore } from '../files';
import { HttpError, idParam, notFound, parse } from '../http/errors';
import { findVariantRow } from '../services/formulas';
import { todayIn } from '../services/studies';
import { documentKey, documentRow, documentsFor, DOCUMENT_TYPES, saveDocument, type DocumentMime } from '../services/product-file/documents';
import { studyProductFile } from '../services/product-file/expected';
import { paoBasis, riskView, saveRisk } from '../services/product-file/risk';
import { studyExists } from '../services/study/detail';

const read = requireRole('technician');
const write = requireRole('formulator');

/** One file in the field "file", at most DOCUMENT_MAX_BYTES; multer's errors as 4xx naming the field. */
const oneFile: RequestHandler = (req, res, next) => {
  multer({ storage: multer.memoryStorage(), limits: { fileSize: DOCUMENT_MAX_BYTES, files: 1, fields: 12, parts: 13, fieldSize: 8 * 1024 } }).single('file')(req, res, (err: unknown) => {
    if (!err) return next();
    if (err instanceof multer.MulterError) {
      if (err.code === 'LIMIT_FILE_SIZE') return next(new HttpError(413, 'too_large', `A document may be at most ${DOCUMENT_MAX_BYTES / 1024 / 1024} MB`, { file: 'File too large' }));
      if (err.code === 'LIMIT_UNEXPECTED_FILE' || err.code === 'LIMIT_FILE_COUNT') return next(new HttpError(400, 'validation', 'Send one file, in the field "file"', { file: 'One file, in the field "file"' }));
      return next(new HttpError(400, 'bad_request', `Upload refused: ${err.message}`, { file: err.message }));
    }
    next(new HttpError(400, 'bad_request', 'The upload was cut short or is malformed; try again', { file: 'Incomplete upload' }));
  });
};

/** Content-Disposition for a download: the original name with its real type's extension (RFC 6266, RFC 5987). */
function downloadHeader(originalName: string, mime: DocumentMime): string {
  const ext = DOCUMENT_TYPES[mime];
  let name = originalName.replace(/[\\/\x00-\x1f\x7f"]+/g, '_').trim().slice(0, 150) || 'document';
  if (!(ext === 'jpg' ? /\.jpe?g$/i : new RegExp(`\\.${ext}$`, 'i')).test(name)) name = `${name}.${ext}`;
  const ascii = name.replace(/[^\x20-\x7e]/g, '_').replace(/[\\%]/g, '_');
  if (ascii === name) return `attachment; filename="${name}"`;
  return `attachment; filename="${ascii}"; filename*=UTF-8''${encodeURIComponent(name).replace(/['()*]/g, (c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`)}`;
}

export function productFileRoutes(db: Db, files: FileStore): Router {
  const r = Router();

  r.get('/variants/:id/risk', read, async (req, res) => {
    const me = member(req);
    res.json({ risk: await riskView(db, me.labId, idParam(req.params.id), todayIn(me.lab.timeZone)) });
  });

  r.put('/variants/:id/risk', write, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    await findVariantRow(db, me.labId, id);
    const input = parse(riskInput, req.body);
    const today = todayIn(me.lab.timeZone);
    await saveRisk(db, me, id, input, await paoBasis(db, me.labId, id, today));
    res.json({ risk: await riskView(db, me.labId, id, today) });
  });

  r.get('/variants/:id/documents', read, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    await findVariantRow(db, me.labId, id);
    res.json({ documents: await documentsFor(db, me.labId, { variantIds: [id] }) });
  });

  r.post('/variants/:id/documents', write, oneFile, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const v = await findVariantRow(db, me.labId, id);
    const meta = parse(documentMeta, req.body);
    if (!req.file) throw new HttpError(400, 'validation', 'Choose a PDF or image file', { file: 'No file chosen' });
    const docId = await saveDocument(db, files, me, { variantId: id, studyId: null, label: `variant ${v.code}` }, meta, req.file);
    res.status(201).json({ id: docId, documents: await documentsFor(db, me.labId, { variantIds: [id] }) });
  });

  r.get('/studies/:id/product-file', read, async (req, res) => {
    res.json({ productFile: await studyProductFile(db, member(req).labId, idParam(req.params.id)) });
  });

  r.post('/studies/:id/documents', write, oneFile, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    if (!(await studyExists(db, me.labId, id))) throw notFound('No such study in your lab');
    const meta = parse(documentMeta, req.body);
    if (!req.file) throw new HttpError(400, 'validation', 'Choose a PDF or image file', { file: 'No file chosen' });
    const docId = await saveDocument(db, files, me, { variantId: null, studyId: id, label: 'study' }, meta, req.file);
    res.status(201).json({ id: docId, productFile: await studyProductFile(db, me.labId, id) });
  });

  /** The file as uploaded, always as an attachment with its checked type; never rendered by the app's origin. */
  r.get('/documents/:id/file', read, async (req, res) => {
    const me = member(req);
    const d = await documentRow(db, me.labId, idParam(req.params.id));
    let stored;
    try {
      stored = await files.get(documentKey(me.labId, d.storedName));
    } catch (err) {
      if (err instanceof FileMissing) throw notFound('The document file is missing from storage');
      throw err;
    }
    res.set({
      'Content-Type': d.mime,
      'Content-Length': String(stored.size),
      'Content-Disposition': downloadHeader(d.originalName, d.mime as DocumentMime),
      'X-Content-Type-Options': 'nosniff',
      'Content-Security-Policy': "default-src 'none'; sandbox",
      'Cache-Control': 'private, no-store',
    });
    await sendStream(res, stored.body);
  });

  return r;
}
