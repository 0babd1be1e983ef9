/**
 * Color difference between two CIE L*a*b* readings (as a colorimeter reports
 * them, D65), through culori: CIE 1976 ΔE*ab (Euclidean distance) and CIEDE2000.
 * Readings are handed to culori as mode 'lab65' so it does not convert them
 * (with mode 'lab', D50, it would adapt first and answer wrongly).
 */
import { differenceCiede2000, differenceEuclidean } from 'culori';
import type { Lab65 } from 'culori';

/** One L*a*b* reading. */
export interface LabReading {
  L: number;
  a: number;
  b: number;
}

const de2000 = differenceCiede2000();
const de76 = differenceEuclidean('lab65');

function toLab65(x: LabReading): Lab65 | null {
  if (![x.L, x.a, x.b].every(Number.isFinite)) return null;
  return { mode: 'lab65', l: x.L, a: x.a, b: x.b };
}

function safe(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}

/** CIE 1976 ΔE*ab; null when a reading has a missing or non-finite value. */
export function deltaE76(x: LabReading, y: LabReading): number | null {
  const p = toLab65(x);
  const q = toLab65(y);
  return p && q ? safe(de76(p, q)) : null;
}

/** CIEDE2000 ΔE00 (kL = kC = kH = 1); null when a reading has a missing or non-finite value. */
export function deltaE2000(x: LabReading, y: LabReading): number | null {
  const p = toLab65(x);
  const q = toLab65(y);
  return p && q ? safe(de2000(p, q)) : null;
}
