/**
 * Photos of a sample at a checkpoint. The type is decided by the file's bytes
 * (never its name or claimed type); files get server-generated names in a folder
 * outside the web root; a thumbnail is made for lists. All or nothing per upload.
 */
import { randomBytes } from 'node:crypto';
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileTypeFromBuffer } from 'file-type';
import sharp from 'sharp';
import { and, asc, eq, inArray } from 'drizzle-orm';
import type { PhotoView } from '../../shared/schemas/records';
import type { Db, DbOrTx } from '../db/client';
import { checkpoints, photos, samples, users } from '../db/schema';
import { HttpError } from '../http/errors';
import { audit } from './audit';

export const PHOTO_LIMITS = { fileSize: 15 * 1024 * 1024, files: 6 };
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
  thumb: Buffer;
}

/** Refuses anything that is not really a JPEG, PNG or WebP image (415), naming the file. */
export async function checkImages(files: IncomingFile[]): Promise<Checked[]> {
  const out: Checked[] = [];
  for (const [i, file] of files.entries()) {
    const type = await fileTypeFromBuffer(file.buffer);
    if (!type || !(type.mime in ALLOWED)) {
      throw new HttpError(415, 'unsupported_type', `${file.originalname} is not a JPEG, PNG or WebP image`, {
        [`photos.${i}`]: `Not a JPEG, PNG or WebP image (${type?.mime ?? 'unknown content'})`,
      });
    }
    try {
      const img = sharp(file.buffer, { failOn: 'error' });
      const meta = await img.metadata();
      const thumb = await img.rotate().resize({ width: 360, height: 360, fit: 'inside', withoutEnlargement: true }).webp({ quality: 78 }).toBuffer();
      out.push({ file, mime: type.mime as AllowedMime, width: meta.width ?? 0, height: meta.height ?? 0, thumb });
    } catch {
      throw new HttpError(415, 'unsupported_type', `${file.originalname} is damaged or truncated`, { [`photos.${i}`]: 'Damaged or truncated image' });
    }
  }
  return out;
}

/** Writes the files, then the rows in one transaction; removes the files if the rows fail. */
export async function savePhotos(
  db: Db,
  dir: string,
  who: { id: number; labId: number },
  target: { studyId: number; sampleId: number; checkpointId: number; sampleCode: string; checkpointLabel: string },
  checked: Checked[],
): Promise<number[]> {
  await mkdir(dir, { recursive: true });
  const written: string[] = [];
  try {
    const named: { c: Checked; storedName: string; thumbName: string }[] = [];
    for (const c of checked) {
      const base = randomBytes(16).toString('hex');
      const storedName = `${base}.${ALLOWED[c.mime]}`;
      const thumbName = `${base}.thumb.webp`;
      await writeFile(join(dir, storedName), c.file.buffer, { flag: 'wx' });
      written.push(storedName);
      await writeFile(join(dir, thumbName), c.thumb, { flag: 'wx' });
      written.push(thumbName);
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
          newValue: { sample: target.sampleCode, checkpoint: target.checkpointLabel, file: c.file.originalname, bytes: c.file.size },
        });
      }
      return ids;
    });
  } catch (err) {
    await Promise.all(written.map((n) => rm(join(dir, n), { force: true })));
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
    width: p.width,
    height: p.height,
    caption: p.caption,
    uploadedBy: who,
    uploadedAt: p.uploadedAt.toISOString(),
    sampleCode: code,
    checkpointLabel: label,
  }));
}
