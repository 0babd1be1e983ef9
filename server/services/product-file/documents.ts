/**
 * Documents of the product file, attached to a variant or a study: PDF or image, the type decided
 * by the file's bytes (never its name or claimed type), stored through the file store under a
 * server-made name, each with its SHA-256. All or nothing: the file is removed if the row fails.
 */
import { createHash, randomBytes } from 'node:crypto';
import { fileTypeFromBuffer } from 'file-type';
import sharp from 'sharp';
import { and, asc, eq, inArray, or } from 'drizzle-orm';
import type { DocumentMeta, DocumentView } from '../../../shared/schemas/product-file';
import type { DbOrTx } from '../../db/client';
import { productDocuments, users, variants } from '../../db/schema';
import type { FileStore } from '../../files';
import { HttpError, notFound } from '../../http/errors';
import { audit } from '../audit';

export const DOCUMENT_TYPES = { 'application/pdf': 'pdf', 'image/jpeg': 'jpg', 'image/png': 'png', 'image/webp': 'webp' } as const;
export type DocumentMime = keyof typeof DOCUMENT_TYPES;
export const documentKey = (labId: number, storedName: string) => `documents/${labId}/${storedName}`;

export interface IncomingDocument {
  originalname: string;
  buffer: Buffer;
  size: number;
}

/** 415 unless the bytes are a PDF (header and end-of-file marker) or a readable JPEG, PNG or WebP image. */
export async function checkDocument(file: IncomingDocument): Promise<{ mime: DocumentMime; sha256: string }> {
  const type = await fileTypeFromBuffer(file.buffer);
  const refuse = (why: string) => new HttpError(415, 'unsupported_type', `${file.originalname.slice(0, 120)} ${why}`, { file: why.charAt(0).toUpperCase() + why.slice(1) });
  if (!type || !(type.mime in DOCUMENT_TYPES)) throw refuse(`is not a PDF or a JPEG, PNG or WebP image (${type?.mime ?? 'unknown content'})`);
  const mime = type.mime as DocumentMime;
  if (mime === 'application/pdf') {
    // A real PDF ends with %%EOF (within the last kilobyte; some writers add a line break after it).
    if (!file.buffer.subarray(-1024).includes('%%EOF')) throw refuse('is not a complete PDF (no end-of-file marker)');
  } else {
    try {
      const meta = await sharp(file.buffer, { failOn: 'error', limitInputPixels: false }).metadata();
      if (!meta.width || !meta.height) throw new Error('no size');
    } catch {
      throw refuse('is a damaged or truncated image');
    }
  }
  return { mime, sha256: createHash('sha256').update(file.buffer).digest('hex') };
}

export async function saveDocument(
  db: DbOrTx,
  files: FileStore,
  who: { id: number; labId: number },
  target: { variantId: number | null; studyId: number | null; label: string },
  meta: DocumentMeta,
  file: IncomingDocument,
): Promise<number> {
  const { mime, sha256 } = await checkDocument(file);
  const storedName = `${randomBytes(16).toString('hex')}.${DOCUMENT_TYPES[mime]}`;
  const key = documentKey(who.labId, storedName);
  await files.put(key, file.buffer, { contentType: mime, sha256 });
  try {
    return await db.transaction(async (tx) => {
      const [{ id }] = await tx
        .insert(productDocuments)
        .values({
          labId: who.labId,
          variantId: target.variantId,
          studyId: target.studyId,
          kind: meta.kind,
          title: meta.title,
          documentDate: meta.documentDate,
          author: meta.author,
          summary: meta.summary,
          criteria: meta.criteria ?? null,
          organisms: meta.organisms ?? null,
          storedName,
          mime,
          bytes: file.size,
          sha256,
          originalName: file.originalname.slice(0, 200),
          uploadedBy: who.id,
        })
        .$returningId();
      await audit(tx, {
        labId: who.labId,
        userId: who.id,
        action: 'create',
        entity: 'product_document',
        entityId: id,
        studyId: target.studyId,
        newValue: { kind: meta.kind, title: meta.title, on: target.label, date: meta.documentDate, criteria: meta.criteria ?? null, file: file.originalname.slice(0, 200), bytes: file.size, sha256 },
      });
      return id;
    });
  } catch (err) {
    await files.delete(key).catch(() => undefined);
    throw err;
  }
}

/** Documents on any of these variants or studies, oldest document date first. */
export async function documentsFor(db: DbOrTx, labId: number, where: { variantIds?: number[]; studyIds?: number[] }): Promise<DocumentView[]> {
  const conds = [];
  if (where.variantIds?.length) conds.push(inArray(productDocuments.variantId, where.variantIds));
  if (where.studyIds?.length) conds.push(inArray(productDocuments.studyId, where.studyIds));
  if (!conds.length) return [];
  const rows = await db
    .select({ d: productDocuments, who: users.name, code: variants.code })
    .from(productDocuments)
    .innerJoin(users, eq(users.id, productDocuments.uploadedBy))
    .leftJoin(variants, eq(variants.id, productDocuments.variantId))
    .where(and(eq(productDocuments.labId, labId), or(...conds)))
    .orderBy(asc(productDocuments.documentDate), asc(productDocuments.id));
  return rows.map(({ d, who, code }) => ({
    id: d.id,
    kind: d.kind,
    title: d.title,
    documentDate: d.documentDate,
    author: d.author,
    summary: d.summary,
    criteria: d.criteria,
    organisms: d.organisms,
    mime: d.mime,
    bytes: d.bytes,
    sha256: d.sha256,
    originalName: d.originalName,
    variantId: d.variantId,
    variantCode: code,
    studyId: d.studyId,
    uploadedBy: who,
    uploadedAt: d.uploadedAt.toISOString(),
    url: `/api/documents/${d.id}/file`,
  }));
}

export async function documentRow(db: DbOrTx, labId: number, id: number) {
  const [d] = await db.select().from(productDocuments).where(and(eq(productDocuments.labId, labId), eq(productDocuments.id, id)));
  if (!d) throw notFound('No such document in your lab');
  return d;
}
