/**
 * Photos: the pixel limit read from the header before decoding, the original's SHA-256 in the
 * audit trail, and the display copy without EXIF/GPS that viewers get, the original only as a
 * download.
 */
import { createHash } from 'node:crypto';
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { crc32, deflateSync } from 'node:zlib';
import { and, desc, eq, sql } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { auditLog, photos } from '../../server/db/schema';
import { attachmentHeader } from '../../server/services/photos';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { bytesOf, createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';
import { makeCatalogue, planFor } from '../helpers/fixtures';

let t: TestApp;
let technician: Client, formulator: Client, otherOwner: Client;
const uploadsDir = mkdtempSync(join(tmpdir(), 'kw-photos-'));
const photoDir = join(uploadsDir, 'photos');
let uploadUrl: string;

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');
/** Stored photo files (names under photos/), from the app's file store: a folder, or a bucket in the api-s3 project. */
const files = async () => {
  const names: string[] = [];
  for await (const o of t.files.list('photos/')) names.push(o.key.slice('photos/'.length));
  return names.sort();
};
const photoCount = async () => Number((await t.db.select({ n: sql<number>`count(*)` }).from(photos))[0].n);

beforeAll(async () => {
  t = await createTestApp({ uploadsDir });
  [technician, formulator, otherOwner] = await Promise.all([t.signIn(DEMO.technician), t.signIn(DEMO.formulator), t.signIn(DEMO.otherOwner)]);
  const cat = await makeCatalogue(t.db, t.labs[0].id);
  // Started 7 days ago: week 1 is due today, so photos may be added there.
  const draft = await formulator.post('/api/studies', planFor(cat, addDays(localDateInZone(new Date(), 'Europe/Berlin'), -7)));
  const study = (await formulator.post(`/api/studies/${draft.body.study.id}/start`)).body.study;
  const oven = study.conditions[1].id;
  const w1 = study.checkpoints.find((c: { label: string; studyConditionId: number | null }) => c.label === 'Week 1' && c.studyConditionId === oven);
  const sample = study.samples.find((s: { studyConditionId: number | null }) => s.studyConditionId === oven);
  uploadUrl = `/api/samples/${sample.code}/checkpoints/${w1.id}/photos`;
});
afterAll(async () => {
  await t?.close();
  rmSync(uploadsDir, { recursive: true, force: true });
});

/**
 * A real, fully decodable 16,000 x 16,000 PNG of about 31 KB: 1-bit greyscale, all rows zero,
 * deflated (chunks per the PNG specification, ISO/IEC 15948). Built by hand because having sharp
 * encode 256 megapixels takes several seconds.
 */
function pngBomb(w = 16000, h = 16000): Buffer {
  const chunk = (type: string, data: Buffer) => {
    const body = Buffer.concat([Buffer.from(type, 'latin1'), data]);
    const out = Buffer.alloc(8 + data.length + 4);
    out.writeUInt32BE(data.length, 0);
    body.copy(out, 4);
    out.writeUInt32BE(crc32(body), 8 + data.length);
    return out;
  };
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(w, 0);
  ihdr.writeUInt32BE(h, 4);
  ihdr[8] = 1; // bit depth; colour type 0 (greyscale), deflate, filter 0, no interlace
  const rows = Buffer.alloc((1 + Math.ceil(w / 8)) * h); // filter byte 0 and zero pixels per row
  const signature = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
  return Buffer.concat([signature, chunk('IHDR', ihdr), chunk('IDAT', deflateSync(rows, { level: 9 })), chunk('IEND', Buffer.alloc(0))]);
}

const upload = (name: string, bytes: Buffer) => technician.agent.post(uploadUrl).set('X-Keepwell-Request', '1').attach('photos', bytes, name);

/** A JPEG as a phone writes it: EXIF with the camera and where it was taken. */
async function phoneJpeg(width = 3000, height = 2000): Promise<Buffer> {
  return sharp({ create: { width, height, channels: 3, background: { r: 200, g: 180, b: 150 } } })
    .jpeg({ quality: 80 })
    .withExif({
      IFD0: { Make: 'TestCam', Model: 'Bench 1' },
      IFD3: { GPSLatitudeRef: 'N', GPSLatitude: '52/1 31/1 12/1', GPSLongitudeRef: 'E', GPSLongitude: '13/1 24/1 36/1' },
    })
    .toBuffer();
}

describe('photo pixel limit', () => {
  it('refuses a 31 KB PNG of 16,000 x 16,000 pixels from its header, stating the 40 megapixel limit; nothing is stored', async () => {
    const bomb = pngBomb();
    expect(bomb.length).toBeLessThan(40 * 1024); // far under the 15 MB file limit
    expect(await sharp(bomb, { limitInputPixels: false }).metadata()).toMatchObject({ format: 'png', width: 16000, height: 16000 });
    const before = { rows: await photoCount(), files: await files() };
    const ok = await sharp({ create: { width: 64, height: 48, channels: 3, background: '#ccc' } }).png().toBuffer();
    const res = await technician.agent.post(uploadUrl).set('X-Keepwell-Request', '1').attach('photos', ok, 'fine.png').attach('photos', bomb, 'bomb.png');
    expect(res.status).toBe(413);
    expect(res.body.error.code).toBe('too_large');
    // 16,000 x 16,000 = 256,000,000 pixels = 256 megapixels.
    expect(res.body.error.fields['photos.1']).toBe('At most 40 megapixels; this one is 256');
    expect(res.body.error.message).toMatch(/at most 40 megapixels/);
    expect(await photoCount()).toBe(before.rows);
    expect(await files()).toEqual(before.files);
    expect((await technician.get('/api/health')).status).toBe(200);
  });
});

describe('stored photos', () => {
  let id: number;
  let sent: Buffer;

  beforeAll(async () => {
    sent = await phoneJpeg();
    // The fixture really carries GPS and camera EXIF.
    const exifIn = (await sharp(sent).metadata()).exif!;
    expect(exifIn.includes(Buffer.from('TestCam'))).toBe(true);
    const res = await upload('IMG_0001.jpg', sent);
    expect(res.status, JSON.stringify(res.body)).toBe(201);
    id = res.body.photos.at(-1).id;
    expect(res.body.photos.at(-1)).toMatchObject({ url: `/api/photos/${id}`, originalUrl: `/api/photos/${id}/original`, thumbUrl: `/api/photos/${id}/thumb` });
  });

  it("record the original's SHA-256 in the audit row", async () => {
    const [row] = await t.db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'photo'), eq(auditLog.entityId, String(id))))
      .orderBy(desc(auditLog.id));
    // Node's createHash('sha256') of the bytes sent (FIPS 180-4 SHA-256).
    expect((row.newValue as { sha256: string }).sha256).toBe(sha256(sent));
    expect((row.newValue as { sha256: string }).sha256).toMatch(/^[0-9a-f]{64}$/);
  });

  it('are shown as a re-encoded copy of at most 2048 px without EXIF or GPS; the original is a download of the exact bytes', async () => {
    const shown = await bytesOf(technician, `/api/photos/${id}`);
    expect(shown.status).toBe(200);
    expect(shown.headers['content-type']).toBe('image/webp');
    expect(shown.headers['content-disposition']).toBe('inline');
    expect(shown.headers['content-security-policy']).toBe("default-src 'none'; sandbox");
    const meta = await sharp(shown.body as Buffer).metadata();
    expect(meta.format).toBe('webp');
    expect(meta.exif).toBeUndefined();
    expect(meta.xmp).toBeUndefined();
    expect(Math.max(meta.width, meta.height)).toBe(2048);
    expect((shown.body as Buffer).includes(Buffer.from('TestCam'))).toBe(false);

    const original = await bytesOf(technician, `/api/photos/${id}/original`);
    expect(original.status).toBe(200);
    expect(original.headers['content-type']).toBe('image/jpeg');
    expect(original.headers['content-disposition']).toBe('attachment; filename="IMG_0001.jpg"');
    expect(original.headers['content-security-policy']).toBe("default-src 'none'; sandbox");
    expect(sha256(original.body as Buffer)).toBe(sha256(sent));

    const thumb = await technician.agent.get(`/api/photos/${id}/thumb`);
    expect(thumb.headers['content-type']).toBe('image/webp');

    // Another lab: 404 for every form, like an unknown id.
    for (const path of [`/api/photos/${id}`, `/api/photos/${id}/original`, `/api/photos/${id}/thumb`]) expect((await otherOwner.get(path)).status).toBe(404);
    expect((await technician.get('/api/photos/999999/original')).status).toBe(404);
  });

  it('download under their uploaded name, made safe and ending in the real type', () => {
    // RFC 6266 section 4.3 and RFC 5987: an ASCII filename, and filename* for the UTF-8 name.
    expect(attachmentHeader('IMG_0001.JPG', 'image/jpeg')).toBe('attachment; filename="IMG_0001.JPG"');
    expect(attachmentHeader('jar "A".png', 'image/jpeg')).toBe('attachment; filename="jar _A_.png.jpg"');
    expect(attachmentHeader('../../etc/passwd', 'image/png')).toBe('attachment; filename=".._.._etc_passwd.png"');
    expect(attachmentHeader('Prüfung 1.webp', 'image/webp')).toBe(`attachment; filename="Pr_fung 1.webp"; filename*=UTF-8''Pr%C3%BCfung%201.webp`);
  });

  it('get their display copy on first view when stored before display copies existed', async () => {
    const [p] = await t.db.select().from(photos).where(eq(photos.id, id));
    const displayName = p.storedName.replace(/\.jpg$/, '.display.webp');
    expect(await files()).toContain(displayName);
    await t.files.delete(`photos/${displayName}`);
    expect(await files()).not.toContain(displayName);
    const shown = await bytesOf(technician, `/api/photos/${id}`);
    expect(shown.status).toBe(200);
    expect((await sharp(shown.body as Buffer).metadata()).exif).toBeUndefined();
    expect(await files()).toContain(displayName);
    // The folder store writes under a temporary name and renames: nothing half-written is left.
    if (t.files.kind === 'folder') expect(readdirSync(photoDir).some((f) => f.endsWith('.tmp'))).toBe(false);
  });

  it('a small photo is not enlarged, and is turned upright by its EXIF orientation', async () => {
    // Orientation 6: the stored pixels must be turned 90° clockwise to be upright (EXIF 2.3, tag 0x0112).
    const sideways = await sharp({ create: { width: 300, height: 200, channels: 3, background: '#a0b0c0' } }).jpeg().toBuffer();
    const tagged = await sharp(sideways).withMetadata({ orientation: 6 }).jpeg().toBuffer();
    expect((await sharp(tagged).metadata()).orientation).toBe(6);
    const res = await upload('side.jpg', tagged);
    expect(res.status).toBe(201);
    const p = res.body.photos.at(-1);
    expect([p.width, p.height]).toEqual([200, 300]);
    const shown = await bytesOf(technician, p.url);
    const meta = await sharp(shown.body as Buffer).metadata();
    expect([meta.width, meta.height]).toEqual([200, 300]);
    expect(meta.orientation).toBeUndefined();
  });
});
