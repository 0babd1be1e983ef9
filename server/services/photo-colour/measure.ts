/**
 * Measures the two marked regions of a photo from the ORIGINAL pixels (not the display copy).
 * Boxes are fractions of the upright image (the display copy is turned upright from EXIF at upload), so the
 * original is turned upright the same way (sharp's rotate() without arguments) before the boxes are cut.
 */
import sharp, { type Sharp } from 'sharp';
import { boxPixels, MIN_PHOTO_EDGE, srgbToLinear, type Box, type RegionStats } from '../../../shared/compute/photo-colour';
import { HttpError } from '../../http/errors';
import { PHOTO_MAX_MEGAPIXELS } from '../photos';

const LINEAR = Array.from({ length: 256 }, (_, v) => srgbToLinear(v / 255));

/** Mean and spread (linear light) per channel, and the share of clipped pixels, of one box of an upright image. */
async function measureBox(upright: Sharp, box: Box, width: number, height: number): Promise<RegionStats> {
  const area = boxPixels(box, width, height);
  const { data, info } = await upright.clone().extract(area).removeAlpha().toColourspace('srgb').raw({ depth: 'uchar' }).toBuffer({ resolveWithObject: true });
  const ch = info.channels;
  const n = info.width * info.height;
  const sum = [0, 0, 0];
  const sq = [0, 0, 0];
  let clipped = 0;
  for (let p = 0; p < n; p++) {
    let clip = false;
    for (let c = 0; c < 3; c++) {
      const v = data[p * ch + (ch >= 3 ? c : 0)];
      if (v === 0 || v === 255) clip = true;
      const l = LINEAR[v];
      sum[c] += l;
      sq[c] += l * l;
    }
    if (clip) clipped++;
  }
  const mean = sum.map((s) => s / n) as [number, number, number];
  const sd = sq.map((s, c) => Math.sqrt(Math.max(0, s / n - mean[c] ** 2))) as [number, number, number];
  return { pixels: n, mean, sd, clipped: clipped / n };
}

/** Both regions of one photo. 422 when the photo is too small to measure. */
export async function measureRegions(original: Buffer, boxes: { product: Box; patch: Box }): Promise<{ product: RegionStats; patch: RegionStats; width: number; height: number }> {
  const upright = sharp(original, { failOn: 'error', limitInputPixels: PHOTO_MAX_MEGAPIXELS * 1_000_000 }).rotate();
  // Decode once, upright; both boxes are cut from the same pixels.
  const { data, info } = await upright.raw().toBuffer({ resolveWithObject: true });
  if (Math.min(info.width, info.height) < MIN_PHOTO_EDGE) {
    throw new HttpError(422, 'unprocessable', `This photo is ${info.width} × ${info.height} pixels; at least ${MIN_PHOTO_EDGE} pixels along each edge are needed to measure colour`, {
      photo: `At least ${MIN_PHOTO_EDGE} pixels along each edge`,
    });
  }
  const img = sharp(data, { raw: { width: info.width, height: info.height, channels: info.channels } });
  return {
    product: await measureBox(img, boxes.product, info.width, info.height),
    patch: await measureBox(img, boxes.patch, info.width, info.height),
    width: info.width,
    height: info.height,
  };
}
