/**
 * Photos of a sample at a checkpoint. The type is decided by the file's bytes
 * (never its name or claimed type) and the pixel count by the header, before any
 * decoding; files get server-generated names in the file store (server/files), never a public URL.
 * Beside each original: a thumbnail for lists and a display copy (re-encoded,
 * turned upright, no EXIF/GPS or other metadata) that viewers get; the original
 * only as an explicit download. All or nothing per upload.
 */
import { createHash, randomBytes } from 'node:crypto';
import { fileTypeFromBuffer } from 'file-type';
import sharp, { type Metadata } from 'sharp';
import { and, asc, eq, inArray } from 'drizzle-orm';
import type { PhotoView } from '../../shared/schemas/records';
import type { Db, DbOrTx } from '../db/client';
import { checkpoints, photos, samples, users } from '../db/schema';
import { photoKey, readAll, type FileStore } from '../files';
import { HttpError } from '../http/errors';
import { audit } from './audit';

export const PHOTO_LIMITS = { fileSize: 15 * 1024 * 1024, files: 6 };
/** Largest photo accepted, in megapixels (width x height / 1,000,000), checked from the header before decoding. */
export const PHOTO_MAX_MEGAPIXELS = 40;
const MAX_PIXELS = PHOTO_MAX_MEGAPIXELS * 1_000_000;
/** Long edge of the display copy that viewers get. */
export const DISPLAY_MAX_EDGE = 2048;
const ALLOWED = { 'image/jpeg': 'jpg', 'image/png': 'png', 'image/webp': 'webp' } as const;
type AllowedMime = keyof typeof ALLOWED;

export interface IncomingFile {
  originalname: string;
  buffer: Buffer;
  size: number;
}

interface Checked {
  file: IncomingFile;
  mime: AllowedMime;
  width: number;
  height: number;
  sha256: string;
  thumb: Buffer;
  display: Buffer;
}

const megapixels = (pixels: number) => Math.round(pixels / 100_000) / 10;

/** Decodes at most MAX_PIXELS; `failOn: 'error'` refuses truncated files. */
const decode = (buffer: Buffer) => sharp(buffer, { failOn: 'error', limitInputPixels: MAX_PIXELS });

/** The display copy: upright, at most DISPLAY_MAX_EDGE px, WebP; sharp writes no metadata unless asked. */
const displayCopy = (buffer: Buffer) =>
  decode(buffer).rotate().resize({ width: DISPLAY_MAX_EDGE, height: DISPLAY_MAX_EDGE, fit: 'inside', withoutEnlargement: true }).webp({ quality: 82 }).toBuffer();

/** The display copy's file name, derived from the original's stored name (no column of its own). */
export function displayNameOf(storedName: string): string {
  return `${storedName.replace(/\.[A-Za-z0-9]+$/, '')}.display.webp`;
}

/**
 * Refuses anything that is not really a JPEG, PNG or WebP image (415) or that has more than
 * PHOTO_MAX_MEGAPIXELS (413, read from the header before any file is decoded), naming the file.
 */
export async function checkImages(files: IncomingFile[]): Promise<Checked[]> {
  const headers: { file: IncomingFile; mime: AllowedMime; width: number; height: number }[] = [];
  for (const [i, file] of files.entries()) {
    const type = await fileTypeFromBuffer(file.buffer);
    if (!type || !(type.mime in ALLOWED)) {
      throw new HttpError(415, 'unsupported_type', `${file.originalname} is not a JPEG, PNG or WebP image`, {
        [`photos.${i}`]: `Not a JPEG, PNG or WebP image (${type?.mime ?? 'unknown content'})`,
      });
    }
    let meta: Metadata;
    try {
      // The header only: metadata() decodes no pixels, so no limit is needed to read the size.
      meta = await sharp(file.buffer, { failOn: 'error', limitInputPixels: false }).metadata();
    } catch {
      throw new HttpError(415, 'unsupported_type', `${file.originalname} is damaged or truncated`, { [`photos.${i}`]: 'Damaged or truncated image' });
    }
    const pixels = meta.width * meta.height;
    if (pixels > MAX_PIXELS) {
      const mp = megapixels(pixels);
      throw new HttpError(
        413,
        'too_large',
        `${file.originalname} is ${meta.width} × ${meta.height} pixels (${mp} megapixels); a photo may have at most ${PHOTO_MAX_MEGAPIXELS} megapixels`,
        { [`photos.${i}`]: `At most ${PHOTO_MAX_MEGAPIXELS} megapixels; this one is ${mp}` },
      );
    }
    headers.push({ file, mime: type.mime as AllowedMime, width: meta.autoOrient?.width ?? meta.width, height: meta.autoOrient?.height ?? meta.height });
  }
  const out: Checked[] = [];
  for (const [i, h] of headers.entries()) {
    try {
      const display = await displayCopy(h.file.buffer);
      // From the display copy: already upright, and far smaller to decode than the original.
      const thumb = await sharp(display).resize({ width: 360, height: 360, fit: 'inside', withoutEnlargement: true }).webp({ quality: 78 }).toBuffer();
      const sha256 = createHash('sha256').update(h.file.buffer).digest('hex');
      out.push({ ...h, sha256, thumb, display });
    } catch {
      throw new HttpError(415, 'unsupported_type', `${h.file.originalname} is damaged or truncated`, { [`photos.${i}`]: 'Damaged or truncated image' });
    }
  }
  return out;
}

/**
 * The display copy of a stored photo, made now if missing (photos stored before display copies
 * existed). The store writes whole objects, so a reader never sees half a file. Returns its key.
 * Throws FileMissing when the original is missing too; 413 when the original is over the pixel limit.
 */
export async function ensureDisplayCopy(files: FileStore, storedName: string): Promise<string> {
  const key = photoKey(displayNameOf(storedName));
  if (await files.head(key)) return key;
  const original = await readAll(files, photoKey(storedName));
  const meta = await sharp(original, { limitInputPixels: false }).metadata();
  if (meta.width * meta.height > MAX_PIXELS) {
    throw new HttpError(413, 'too_large', `This photo has ${megapixels(meta.width * meta.height)} megapixels, over the ${PHOTO_MAX_MEGAPIXELS} megapixel limit for viewing; download the original instead`);
  }
  await files.put(key, await displayCopy(original), { contentType: 'image/webp' });
  return key;
}

/**
 * Content-Disposition for downloading an original: the uploaded name made safe and ending in its
 * real type's extension; an ASCII `filename` and, for other names, `filename*` (RFC 6266, RFC 5987).
 */
export function attachmentHeader(originalName: string, mime: string): string {
  const ext = ALLOWED[mime as AllowedMime] ?? 'bin';
  let name = originalName.replace(/[\\/\x00-\x1f\x7f"]+/g, '_').trim().slice(0, 150) || 'photo';
  if (!(ext === 'jpg' ? /\.jpe?g$/i : new RegExp(`\\.${ext}$`, 'i')).test(name)) name = `${name}.${ext}`;
  const ascii = name.replace(/[^\x20-\x7e]/g, '_').replace(/[\\%]/g, '_');
  if (ascii === name) return `attachment; filename="${name}"`;
  const encoded = encodeURIComponent(name).replace(/['()*]/g, (c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`);
  return `attachment; filename="${ascii}"; filename*=UTF-8''${encoded}`;
}

/** Writes the files, then the rows in one transaction; removes the files if the rows fail. */
export async function savePhotos(
  db: Db,
  files: FileStore,
  who: { id: number; labId: number },
  target: { studyId: number; sampleId: number; checkpointId: number; sampleCode: string; checkpointLabel: string; clientId?: string | null },
  checked: Checked[],
): Promise<number[]> {
  const written: string[] = [];
  try {
    const named: { c: Checked; storedName: string; thumbName: string }[] = [];
    for (const c of checked) {
      const base = randomBytes(16).toString('hex');
      const storedName = `${base}.${ALLOWED[c.mime]}`;
      const thumbName = `${base}.thumb.webp`;
      written.push(photoKey(storedName));
      await files.put(photoKey(storedName), c.file.buffer, { contentType: c.mime, sha256: c.sha256 });
      written.push(photoKey(thumbName));
      await files.put(photoKey(thumbName), c.thumb, { contentType: 'image/webp' });
      written.push(photoKey(displayNameOf(storedName)));
      await files.put(photoKey(displayNameOf(storedName)), c.display, { contentType: 'image/webp' });
      named.push({ c, storedName, thumbName });
    }
    return await db.transaction(async (tx) => {
      const ids: number[] = [];
      for (const { c, storedName, thumbName } of named) {
        const [{ id }] = await tx
          .insert(photos)
          .values({
            labId: who.labId,
            studyId: target.studyId,
            sampleId: target.sampleId,
            checkpointId: target.checkpointId,
            storedName,
            thumbName,
            mime: c.mime,
            bytes: c.file.size,
            width: c.width,
            height: c.height,
            originalName: c.file.originalname.slice(0, 200),
            uploadedBy: who.id,
            clientId: target.clientId ?? null,
          })
          .$returningId();
        ids.push(id);
        await audit(tx, {
          labId: who.labId,
          userId: who.id,
          action: 'create',
          entity: 'photo',
          entityId: id,
          studyId: target.studyId,
          newValue: { sample: target.sampleCode, checkpoint: target.checkpointLabel, file: c.file.originalname, bytes: c.file.size, sha256: c.sha256 },
        });
      }
      return ids;
    });
  } catch (err) {
    await Promise.all(written.map((k) => files.delete(k).catch(() => undefined)));
    throw err;
  }
}

export async function photosFor(
  db: DbOrTx,
  labId: number,
  where: { studyId?: number; sampleId?: number; checkpointId?: number; sampleIds?: number[] },
): Promise<PhotoView[]> {
  const conds = [eq(photos.labId, labId)];
  if (where.studyId) conds.push(eq(photos.studyId, where.studyId));
  if (where.sampleId) conds.push(eq(photos.sampleId, where.sampleId));
  if (where.checkpointId) conds.push(eq(photos.checkpointId, where.checkpointId));
  if (where.sampleIds?.length) conds.push(inArray(photos.sampleId, where.sampleIds));
  const rows = await db
    .select({ p: photos, who: users.name, code: samples.code, label: checkpoints.label })
    .from(photos)
    .innerJoin(users, eq(users.id, photos.uploadedBy))
    .innerJoin(samples, eq(samples.id, photos.sampleId))
    .innerJoin(checkpoints, eq(checkpoints.id, photos.checkpointId))
    .where(and(...conds))
    .orderBy(asc(checkpoints.dueDate), asc(photos.id));
  return rows.map(({ p, who, code, label }) => ({
    id: p.id,
    url: `/api/photos/${p.id}`,
    thumbUrl: `/api/photos/${p.id}/thumb`,
    originalUrl: `/api/photos/${p.id}/original`,
    width: p.width,
    height: p.height,
    caption: p.caption,
    uploadedBy: who,
    uploadedAt: p.uploadedAt.toISOString(),
    sampleCode: code,
    checkpointLabel: label,
  }));
}
