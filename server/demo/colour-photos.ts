/**
 * Demo: photos with a reference card (18 % grey) beside the jar for the accelerated study's first batch,
 * at the initial test, every recorded 45 °C pull and its same-day control; the product yellows at 45 °C,
 * the control barely moves. Each photo has its own invented light (a colour cast and an exposure), so the
 * card correction has work to do. The regions are marked, as a technician would. Every value is invented.
 */
import { randomBytes } from 'node:crypto';
import { and, asc, eq, inArray } from 'drizzle-orm';
import sharp from 'sharp';
import { CARD_PRESETS, labToLinearRgb, type Box } from '../../shared/compute/photo-colour';
import type { DbOrTx } from '../db/client';
import { checkpoints, colourCards, photoRegions, photos, samples, storageConditions, studies, studyConditions } from '../db/schema';
import { photoKey, type FileStore } from '../files';
import { audit } from '../services/audit';
import { measureRegions } from '../services/photo-colour/measure';

const W = 800;
const H = 600;
export const DEMO_PRODUCT_BOX: Box = { x: 0.29, y: 0.39, w: 0.17, h: 0.22 };
export const DEMO_PATCH_BOX: Box = { x: 0.73, y: 0.37, w: 0.17, h: 0.26 };

function rng(seed: number) {
  let s = seed >>> 0;
  return () => ((s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32);
}

const enc = (lin: number) => {
  const c = Math.min(1, Math.max(0, lin));
  return Math.round((c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055) * 255);
};
const hex = (lin: number[], light: number[]) => `#${lin.map((v, i) => enc(v * light[i]).toString(16).padStart(2, '0')).join('')}`;

/** An open jar from above beside a grey card, under a light given as per-channel gains (linear). */
async function cardPhoto(productLab: { L: number; a: number; b: number }, light: number[]): Promise<Buffer> {
  const grey = CARD_PRESETS.find((p) => p.key === 'grey18')!;
  const card = labToLinearRgb(grey);
  const product = labToLinearRgb(productLab);
  const svg = `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}">
    <rect width="${W}" height="${H}" fill="${hex([0.35, 0.36, 0.33], light)}"/>
    <circle cx="300" cy="300" r="200" fill="${hex([0.26, 0.31, 0.32], light)}"/>
    <circle cx="300" cy="300" r="180" fill="${hex(product, light)}"/>
    <rect x="560" y="190" width="190" height="220" rx="6" fill="${hex([0.85, 0.85, 0.85], light)}"/>
    <rect x="575" y="215" width="160" height="170" fill="${hex(card, light)}"/>
  </svg>`;
  return sharp(Buffer.from(svg)).jpeg({ quality: 92 }).toBuffer();
}

/** Cream at day 0, yellowing at 45 °C (b* up about 1 per week, L* down slightly); invented. */
function productAt(day: number, hot: boolean) {
  const weeks = day / 7;
  return hot ? { L: 93 - 0.25 * weeks, a: 0.5 + 0.1 * weeks, b: 12 + 1.1 * weeks } : { L: 93 - 0.02 * weeks, a: 0.5, b: 12 + 0.08 * weeks };
}

export async function seedColourPhotos(tx: DbOrTx, labId: number, technician: number, files: FileStore): Promise<void> {
  // The lab's accelerated study at 45 °C with recorded pulls (the demo's first study).
  const [target] = await tx
    .select({ studyId: studies.id, startDate: studies.startDate })
    .from(studies)
    .innerJoin(studyConditions, eq(studyConditions.studyId, studies.id))
    .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(and(eq(studies.labId, labId), eq(studyConditions.role, 'accelerated'), eq(storageConditions.setpointC, 45)))
    .orderBy(asc(studies.id))
    .limit(1);
  if (!target) return;
  const scs = await tx.select({ id: studyConditions.id, role: studyConditions.role }).from(studyConditions).where(eq(studyConditions.studyId, target.studyId));
  const hotId = scs.find((s) => s.role === 'accelerated')!.id;
  const controlId = scs.find((s) => s.role === 'control')?.id;
  const cps = await tx
    .select()
    .from(checkpoints)
    .where(and(eq(checkpoints.studyId, target.studyId), eq(checkpoints.status, 'done')))
    .orderBy(asc(checkpoints.dueDate));
  const wanted = cps.filter((c) => c.kind === 'initial' || c.studyConditionId === hotId || (controlId && c.studyConditionId === controlId && cps.some((h) => h.studyConditionId === hotId && h.controlCheckpointId === c.id)));
  const smp = await tx.select().from(samples).where(eq(samples.studyId, target.studyId)).orderBy(asc(samples.batchId), asc(samples.labelOrder));
  const firstBatch = smp[0]?.batchId;
  const grey = CARD_PRESETS.find((p) => p.key === 'grey18')!;
  // Preset values (from memory, see shared/compute/photo-colour.ts).
  const [{ id: cardId }] = await tx.insert(colourCards).values({ labId, name: '18 % grey card', cieL: grey.L, cieA: grey.a, cieB: grey.b, createdBy: technician }).$returningId();
  const rand = rng(4517);
  const ids: number[] = [];
  for (const cp of wanted) {
    const sample = smp.find((s) => s.batchId === firstBatch && (cp.kind === 'initial' ? s.studyConditionId === null : s.studyConditionId === cp.studyConditionId));
    if (!sample) continue;
    const day = Math.round((Date.parse(cp.dueDate) - Date.parse(target.startDate)) / 86_400_000);
    const exposure = 0.62 + rand() * 0.25;
    const light = [exposure * (0.92 + rand() * 0.16), exposure, exposure * (0.88 + rand() * 0.17)];
    const img = await cardPhoto(productAt(day, cp.studyConditionId === hotId), light);
    const thumb = await sharp(img).resize({ width: 360 }).webp({ quality: 78 }).toBuffer();
    const base = randomBytes(16).toString('hex');
    await files.put(photoKey(`${base}.jpg`), img, { contentType: 'image/jpeg' });
    await files.put(photoKey(`${base}.thumb.webp`), thumb, { contentType: 'image/webp' });
    const at = new Date(`${cp.dueDate}T10:50:00Z`);
    const [{ id }] = await tx
      .insert(photos)
      .values({
        labId,
        studyId: target.studyId,
        sampleId: sample.id,
        checkpointId: cp.id,
        storedName: `${base}.jpg`,
        thumbName: `${base}.thumb.webp`,
        mime: 'image/jpeg',
        bytes: img.length,
        width: W,
        height: H,
        originalName: `${sample.code}-${cp.label.toLowerCase().replace(/\s+/g, '-')}-card.jpg`,
        caption: 'With the 18 % grey card',
        uploadedBy: technician,
        uploadedAt: at,
      })
      .$returningId();
    const m = await measureRegions(img, { product: DEMO_PRODUCT_BOX, patch: DEMO_PATCH_BOX });
    await tx.insert(photoRegions).values({ labId, photoId: id, cardId, productBox: DEMO_PRODUCT_BOX, patchBox: DEMO_PATCH_BOX, productStats: m.product, patchStats: m.patch, markedBy: technician, markedAt: new Date(at.getTime() + 120_000) });
    ids.push(id);
  }
  if (ids.length) {
    const rows = await tx.select({ id: photos.id }).from(photos).where(inArray(photos.id, ids));
    await audit(tx, { labId, userId: null, action: 'import', entity: 'photo_regions', entityId: null, studyId: target.studyId, newValue: { demo: true, photos: rows.length }, reason: 'Demo data (invented)' });
  }
}
