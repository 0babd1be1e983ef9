/**
 * Colour measured from a photo that shows a neutral reference card beside the product.
 * Pure functions; no I/O. The server measures the two marked regions (server/services/photo-colour.ts).
 *
 * Method:
 * 1. Each region's pixels are linearised from sRGB per IEC 61966-2-1 and averaged in linear light.
 * 2. Diagonal white-balance correction (a von Kries-type scaling in camera RGB): each channel of the product
 *    is multiplied by known / measured for the card's patch, the known value being the card's CIELAB (D65)
 *    converted to linear sRGB. Limits: it assumes the camera's response is linear after sRGB decoding, the
 *    light is spectrally similar over product and card, and the camera's channels are close to sRGB primaries;
 *    it corrects a global colour cast and exposure, not uneven light, glare, tone curves or metamerism.
 * 3. Linear sRGB -> CIE XYZ -> CIELAB under D65 (CIE 15), through culori; ΔE00 through ./color.ts.
 * The result estimates the product's colour; an instrument (colorimeter) reading always wins over it.
 */
import { converter } from 'culori';
import { deltaE2000, type LabReading } from './color';

/** One region as the server measured it: linear-light mean and standard deviation per channel (0..1). */
export interface RegionStats {
  /** Pixels measured. */
  pixels: number;
  mean: [number, number, number];
  sd: [number, number, number];
  /** Share of pixels (0..1) with a channel at 0 or 255. */
  clipped: number;
}

/** A box on the upright image, as fractions of its width and height (0..1), so it survives resizing. */
export interface Box {
  x: number;
  y: number;
  w: number;
  h: number;
}

/** Smallest region measured, in pixels of the original (a 20 x 20 box). */
export const MIN_REGION_PIXELS = 400;
/** Smallest photo measured, in pixels along its short edge. */
export const MIN_PHOTO_EDGE = 200;
/** Share of clipped pixels above which a patch is not trusted (value withheld). */
export const MAX_PATCH_CLIPPED = 0.01;
/** Share of clipped pixels above which a product region is flagged. */
export const MAX_PRODUCT_CLIPPED = 0.02;
/** A patch channel mean above this (linear, 0..1) is saturated: withheld. */
export const MAX_PATCH_LINEAR = 0.95;
/** A patch channel mean below this (linear) is too dark to scale by: withheld. */
export const MIN_PATCH_LINEAR = 0.01;
/** Relative spread (sd / mean, per channel) above which a region is uneven: patch withheld, product flagged. */
export const MAX_RELATIVE_SPREAD = 0.15;
/** Patch brightness (linear luminance) may differ by at most this factor between two photos compared: else flagged. */
export const MAX_EXPOSURE_FACTOR = 2;

/**
 * Rules of thumb for reading ΔE00 (common practice, no published source): about 1 is just noticeable
 * side by side; 2 to 3 is clearly visible to most people.
 */
export const DELTA_E_JUST_NOTICEABLE = 1;
export const DELTA_E_CLEARLY_VISIBLE = 2;

/** Presets for a reference card. Values from memory, not a card maker's sheet: prefer the card's published values. */
export const CARD_PRESETS = [
  // A plain white card or paper: L* about 95, near neutral (from memory).
  { key: 'white', name: 'Plain white', L: 95, a: 0, b: 0 },
  // An 18 % grey card reflects 18 % of light: Y = 18 gives L* = 116 * 0.18^(1/3) - 16 = 49.5 (CIE 15 L* formula).
  { key: 'grey18', name: '18 % grey', L: 49.5, a: 0, b: 0 },
] as const;

export type QualityFlag =
  | 'patch_clipped'
  | 'patch_saturated'
  | 'patch_dark'
  | 'patch_uneven'
  | 'patch_small'
  | 'product_small'
  | 'product_uneven'
  | 'product_clipped'
  | 'exposure_changed';

/** Flags that withhold the value; the others show it beside the flag. */
export const WITHHOLDING_FLAGS: readonly QualityFlag[] = ['patch_clipped', 'patch_saturated', 'patch_dark', 'patch_uneven', 'patch_small', 'product_small'];

export const FLAG_TEXT: Readonly<Record<QualityFlag, string>> = {
  patch_clipped: `more than ${MAX_PATCH_CLIPPED * 100} % of the card's pixels are clipped`,
  patch_saturated: 'the card patch is over-exposed (saturated)',
  patch_dark: 'the card patch is too dark',
  patch_uneven: `the card patch is uneven (spread over ${MAX_RELATIVE_SPREAD * 100} % of its mean): glare or shadow`,
  patch_small: `the card box is smaller than ${MIN_REGION_PIXELS} pixels`,
  product_small: `the product box is smaller than ${MIN_REGION_PIXELS} pixels`,
  product_uneven: `the product region is uneven (spread over ${MAX_RELATIVE_SPREAD * 100} % of its mean)`,
  product_clipped: `more than ${MAX_PRODUCT_CLIPPED * 100} % of the product's pixels are clipped`,
  exposure_changed: `the card's brightness differs by more than ${MAX_EXPOSURE_FACTOR}× between the photos`,
};

const toLab65 = converter('lab65');
const toLrgb = converter('lrgb');

/** sRGB component (0..1, gamma-encoded) to linear light, IEC 61966-2-1. */
export function srgbToLinear(v: number): number {
  return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4;
}

/** Linear sRGB (D65) of a CIELAB D65 colour (CIE 15), unclamped. */
export function labToLinearRgb(lab: LabReading): [number, number, number] {
  const c = toLrgb({ mode: 'lab65', l: lab.L, a: lab.a, b: lab.b });
  return [c.r, c.g, c.b];
}

/** CIELAB D65 of a linear sRGB colour (CIE 15 via culori). */
export function linearRgbToLab(rgb: readonly [number, number, number]): LabReading {
  const c = toLab65({ mode: 'lrgb', r: rgb[0], g: rgb[1], b: rgb[2] });
  return { L: c.l, a: c.a, b: c.b };
}

/** Relative luminance Y (0..1) of linear sRGB (IEC 61966-2-1 matrix row). */
export function luminance(rgb: readonly [number, number, number]): number {
  return 0.2126 * rgb[0] + 0.7152 * rgb[1] + 0.0722 * rgb[2];
}

/** Quality flags of one photo's two regions. */
export function regionFlags(product: RegionStats, patch: RegionStats): QualityFlag[] {
  const flags: QualityFlag[] = [];
  if (patch.pixels < MIN_REGION_PIXELS) flags.push('patch_small');
  if (product.pixels < MIN_REGION_PIXELS) flags.push('product_small');
  if (patch.clipped > MAX_PATCH_CLIPPED) flags.push('patch_clipped');
  if (patch.mean.some((m) => m > MAX_PATCH_LINEAR)) flags.push('patch_saturated');
  if (patch.mean.some((m) => m < MIN_PATCH_LINEAR)) flags.push('patch_dark');
  const uneven = (r: RegionStats) => r.mean.some((m, i) => m > 0 && r.sd[i] / m > MAX_RELATIVE_SPREAD);
  if (uneven(patch)) flags.push('patch_uneven');
  if (uneven(product)) flags.push('product_uneven');
  if (product.clipped > MAX_PRODUCT_CLIPPED) flags.push('product_clipped');
  return flags;
}

export interface PhotoColour {
  /** The corrected product colour; null when withheld. */
  lab: LabReading | null;
  /** Corrected product colour as sRGB hex for a swatch; null when withheld. */
  swatch: string | null;
  flags: QualityFlag[];
  /** Why the value is withheld (sentences); empty when shown. */
  withheld: string[];
  /** Linear luminance of the patch as photographed (to compare exposure between photos). */
  patchY: number;
}

/** The product's colour after diagonal white-balance correction against the card's known CIELAB. */
export function correctedColour(product: RegionStats, patch: RegionStats, card: LabReading): PhotoColour {
  const flags = regionFlags(product, patch);
  const withheld = flags.filter((f) => WITHHOLDING_FLAGS.includes(f)).map((f) => FLAG_TEXT[f]);
  const patchY = luminance(patch.mean);
  if (withheld.length) return { lab: null, swatch: null, flags, withheld, patchY };
  const known = labToLinearRgb(card);
  const corrected = product.mean.map((m, i) => (m * known[i]) / patch.mean[i]) as [number, number, number];
  const lab = linearRgbToLab(corrected);
  return { lab, swatch: swatchOf(corrected), flags, withheld, patchY };
}

function swatchOf(rgb: readonly number[]): string {
  const enc = (v: number) => {
    const c = Math.min(1, Math.max(0, v));
    const s = c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
    return Math.round(s * 255).toString(16).padStart(2, '0');
  };
  return `#${rgb.map(enc).join('')}`;
}

export interface PhotoDifference {
  /** ΔE00, or null when withheld. */
  deltaE: number | null;
  flags: QualityFlag[];
  withheld: string[];
}

/** ΔE00 between two corrected photo colours, with both photos' flags and the exposure check. */
export function photoDifference(x: PhotoColour, y: PhotoColour): PhotoDifference {
  const flags = [...new Set([...x.flags, ...y.flags])];
  const withheld = [...new Set([...x.withheld, ...y.withheld])];
  const ratio = x.patchY > 0 && y.patchY > 0 ? Math.max(x.patchY / y.patchY, y.patchY / x.patchY) : Infinity;
  if (ratio > MAX_EXPOSURE_FACTOR && !flags.includes('exposure_changed')) flags.push('exposure_changed');
  if (!x.lab || !y.lab) return { deltaE: null, flags, withheld };
  const d = deltaE2000(x.lab, y.lab);
  return { deltaE: d === null ? null : Math.round(d * 100) / 100, flags, withheld };
}

/** A box is inside the image and not empty. */
export function boxInside(b: Box): boolean {
  return b.x >= 0 && b.y >= 0 && b.w > 0 && b.h > 0 && b.x + b.w <= 1 + 1e-9 && b.y + b.h <= 1 + 1e-9;
}

/** A fractional box in whole pixels of an image of the given size, clamped inside it. */
export function boxPixels(b: Box, width: number, height: number): { left: number; top: number; width: number; height: number } {
  const left = Math.min(width - 1, Math.max(0, Math.round(b.x * width)));
  const top = Math.min(height - 1, Math.max(0, Math.round(b.y * height)));
  const right = Math.min(width, Math.max(left + 1, Math.round((b.x + b.w) * width)));
  const bottom = Math.min(height, Math.max(top + 1, Math.round((b.y + b.h) * height)));
  return { left, top, width: right - left, height: bottom - top };
}

/** Criterion "colour difference from day 0 at most N (ΔE00)": pass, fail, or no verdict when withheld. */
export function judgeDeltaE(deltaE: number | null, max: number): { verdict: 'pass' | 'fail' | 'withheld'; message: string } {
  if (deltaE === null) return { verdict: 'withheld', message: 'No photo colour difference measured' };
  const ok = deltaE <= max + 1e-9;
  return { verdict: ok ? 'pass' : 'fail', message: `Colour difference from day 0 ΔE00 ${deltaE.toFixed(1)}; allowed at most ${max}` };
}
