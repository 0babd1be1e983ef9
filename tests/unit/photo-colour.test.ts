import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { deltaE2000 } from '../../shared/compute/color';
import {
  boxInside,
  boxPixels,
  correctedColour,
  labToLinearRgb,
  linearRgbToLab,
  photoDifference,
  srgbToLinear,
  type Box,
} from '../../shared/compute/photo-colour';
import { measureRegions } from '../../server/services/photo-colour/measure';

// sRGB encoding and decoding: IEC 61966-2-1:1999 (the piecewise curve, 0.04045 / 12.92 / 2.4);
// sRGB -> XYZ -> CIELAB under D65: CIE 15:2004 (L* = 116 f(Y/Yn) - 16 ...), both through culori.
// ΔE00: CIEDE2000 as checked in color.test.ts against Sharma, Wu & Dalal 2005.

type Rgb = [number, number, number];
const PRODUCT_BOX: Box = { x: 0.1, y: 0.2, w: 0.3, h: 0.5 };
const PATCH_BOX: Box = { x: 0.6, y: 0.2, w: 0.3, h: 0.5 };

/** Lab of an sRGB (0..255) colour straight from the formulas (no photo). */
const labOf = (rgb: Rgb) => linearRgbToLab(rgb.map((v) => srgbToLinear(v / 255)) as Rgb);

/**
 * A synthetic photo: a product region and a grey patch of known sRGB on a mid background, then a global
 * cast (per-channel gains in linear light) and an exposure factor, encoded back to 8-bit sRGB, with mild noise.
 */
async function photo(product: Rgb, patch: Rgb, cast: Rgb = [1, 1, 1], exposure = 1, seed = 1): Promise<Buffer> {
  const W = 400;
  const H = 300;
  const buf = Buffer.alloc(W * H * 3);
  let s = seed;
  const noise = () => {
    s = (s * 1103515245 + 12345) % 2 ** 31;
    return (s / 2 ** 31 - 0.5) * 2; // ±1 level of 8 bits
  };
  const enc = (lin: number) => {
    const c = Math.min(1, Math.max(0, lin));
    const v = c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
    return Math.min(255, Math.max(0, Math.round(v * 255 + noise())));
  };
  const inBox = (b: Box, x: number, y: number) => x >= b.x * W && x < (b.x + b.w) * W && y >= b.y * H && y < (b.y + b.h) * H;
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      const src: Rgb = inBox(PRODUCT_BOX, x, y) ? product : inBox(PATCH_BOX, x, y) ? patch : [90, 90, 100];
      for (let c = 0; c < 3; c++) buf[(y * W + x) * 3 + c] = enc(srgbToLinear(src[c] / 255) * cast[c] * exposure);
    }
  }
  return sharp(buf, { raw: { width: W, height: H, channels: 3 } }).png().toBuffer();
}

async function measured(image: Buffer, card: { L: number; a: number; b: number }) {
  const m = await measureRegions(image, { product: PRODUCT_BOX, patch: PATCH_BOX });
  return correctedColour(m.product, m.patch, card);
}

const GREY: Rgb = [160, 160, 160];
const CARD = labOf(GREY);
const CREAM: Rgb = [222, 196, 150];
const YELLOWED: Rgb = [214, 180, 118];

describe('sRGB and CIELAB (IEC 61966-2-1, CIE 15)', () => {
  it('linearises sRGB with the IEC 61966-2-1 curve', () => {
    expect(srgbToLinear(0)).toBe(0);
    expect(srgbToLinear(1)).toBeCloseTo(1, 12);
    expect(srgbToLinear(0.04045)).toBeCloseTo(0.04045 / 12.92, 12);
    // IEC 61966-2-1: sRGB 0.5 -> ((0.5 + 0.055) / 1.055)^2.4 = 0.21404
    expect(srgbToLinear(0.5)).toBeCloseTo(0.21404, 5);
  });
  it('white (D65) is L* 100, a* 0, b* 0 and round-trips through linear RGB', () => {
    const white = linearRgbToLab([1, 1, 1]);
    expect(white.L).toBeCloseTo(100, 3);
    expect(Math.abs(white.a)).toBeLessThan(0.01);
    expect(Math.abs(white.b)).toBeLessThan(0.01);
    // CIE 15: Y = 0.18 -> L* = 116 * 0.18^(1/3) - 16 = 49.496
    expect(linearRgbToLab([0.18, 0.18, 0.18]).L).toBeCloseTo(49.496, 2);
    const back = labToLinearRgb(linearRgbToLab([0.3, 0.2, 0.1]));
    back.forEach((v, i) => expect(v).toBeCloseTo([0.3, 0.2, 0.1][i], 6));
  });
});

describe('colour from synthetic photos with a reference card', () => {
  it('the same colours under a colour cast and an exposure change: ΔE00 under 1', async () => {
    const a = await measured(await photo(CREAM, GREY), CARD);
    const b = await measured(await photo(CREAM, GREY, [1.15, 0.95, 0.75], 0.7, 7), CARD);
    const d = photoDifference(a, b);
    expect(d.withheld).toEqual([]);
    expect(d.deltaE).not.toBeNull();
    expect(d.deltaE!).toBeLessThan(1);
    // Without correction the cast alone is far above 1: the correction does the work.
    expect(deltaE2000(labOf(CREAM), labOf([232, 190, 130]))!).toBeGreaterThan(3);
  });

  it('a known change is recovered within 1 ΔE00 through a cast and exposure change', async () => {
    const expected = deltaE2000(labOf(CREAM), labOf(YELLOWED))!;
    const a = await measured(await photo(CREAM, GREY), CARD);
    const b = await measured(await photo(YELLOWED, GREY, [0.9, 1.0, 1.2], 1.25, 3), CARD);
    const d = photoDifference(a, b);
    expect(expected).toBeGreaterThan(5);
    expect(Math.abs(d.deltaE! - expected)).toBeLessThan(1);
  });

  it('recovers the product CIELAB itself within 1 ΔE00', async () => {
    const c = await measured(await photo(CREAM, GREY, [1.1, 1, 0.85], 0.8), CARD);
    expect(deltaE2000(c.lab!, labOf(CREAM))!).toBeLessThan(1);
    expect(c.swatch).toMatch(/^#[0-9a-f]{6}$/);
  });

  it('withholds the value when the patch is clipped, and flags a big exposure change', async () => {
    const clipped = await measured(await photo(CREAM, [255, 255, 255]), CARD);
    expect(clipped.lab).toBeNull();
    expect(clipped.flags).toContain('patch_clipped');
    expect(clipped.withheld.length).toBeGreaterThan(0);
    const a = await measured(await photo(CREAM, GREY), CARD);
    const dark = await measured(await photo(CREAM, GREY, [1, 1, 1], 0.3), CARD);
    expect(photoDifference(a, dark).flags).toContain('exposure_changed');
  });

  it('refuses a photo too small to measure', async () => {
    const tiny = await sharp({ create: { width: 120, height: 90, channels: 3, background: '#808080' } }).png().toBuffer();
    await expect(measureRegions(tiny, { product: PRODUCT_BOX, patch: PATCH_BOX })).rejects.toMatchObject({ status: 422 });
  });

  it('turns the original upright from EXIF before cutting the boxes', async () => {
    // Stored rotated 90° with EXIF orientation 6 ("rotate 90 CW to view"): the upright view is the synthetic photo.
    const upright = await photo(CREAM, GREY);
    const stored = await sharp(upright).rotate(-90).withMetadata({ orientation: 6 }).jpeg({ quality: 98 }).toBuffer();
    const c = await measured(stored, CARD);
    expect(deltaE2000(c.lab!, labOf(CREAM))!).toBeLessThan(1);
  });
});

describe('boxes', () => {
  it('checks boxes lie inside the image and converts them to pixels', () => {
    expect(boxInside({ x: 0, y: 0, w: 1, h: 1 })).toBe(true);
    expect(boxInside({ x: 0.8, y: 0, w: 0.3, h: 0.1 })).toBe(false);
    expect(boxInside({ x: 0.1, y: 0.1, w: 0, h: 0.1 })).toBe(false);
    expect(boxPixels({ x: 0.5, y: 0.25, w: 0.25, h: 0.5 }, 400, 200)).toEqual({ left: 200, top: 50, width: 100, height: 100 });
  });
});

describe('criterion kind delta_e00_max', () => {
  it('judges a ΔE00 value; wording says ΔE00 from day 0', async () => {
    const { evaluate } = await import('../../shared/compute/criteria');
    const { criterionText } = await import('../../shared/criterion-text');
    expect(evaluate({ kind: 'delta_e00_max', max: 2 }, 1.5).verdict).toBe('pass');
    expect(evaluate({ kind: 'delta_e00_max', max: 2 }, 2.6, null, { name: 'Colour' })).toEqual({ verdict: 'fail', message: 'Colour ΔE00 2.6 from day 0; allowed at most 2' });
    expect(criterionText({ kind: 'delta_e00_max', max: 2 })).toBe('colour difference from day 0 at most 2 (ΔE00)');
  });
});
