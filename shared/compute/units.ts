/**
 * Unit conversions and decimal rounding shared by the compute modules.
 * Pure functions; no I/O.
 */

/** Offset between the Celsius and kelvin scales: T/K = t/°C + 273.15 (SI Brochure, 9th ed.). */
export const KELVIN_OFFSET = 273.15;

/** Grams in one international avoirdupois ounce (exact by definition, International Yard and Pound Agreement, 1959). */
export const OUNCE_GRAMS = 28.349523125;

/** °F -> °C: t/°C = (t/°F - 32) / 1.8. */
export function fahrenheitToCelsius(f: number): number {
  return (f - 32) / 1.8;
}

/** °C -> °F: t/°F = t/°C x 1.8 + 32. */
export function celsiusToFahrenheit(c: number): number {
  return c * 1.8 + 32;
}

/** °C -> K. */
export function celsiusToKelvin(c: number): number {
  return c + KELVIN_OFFSET;
}

/** K -> °C. */
export function kelvinToCelsius(k: number): number {
  return k - KELVIN_OFFSET;
}

/** Avoirdupois ounces -> grams. */
export function ouncesToGrams(oz: number): number {
  return oz * OUNCE_GRAMS;
}

/** Shifts the decimal exponent of x by `by` places through its shortest decimal string, so no binary error is added. */
function shiftDecimal(x: number, by: number): number {
  const [mantissa, exponent] = String(x).split('e');
  return Number(`${mantissa}e${Number(exponent ?? 0) + by}`);
}

/**
 * Rounds x to `decimals` places, half away from zero, as the decimal literal reads
 * (roundTo(1.005, 2) = 1.01 although 1.005 is stored as 1.00499999...).
 * Works by shifting the decimal exponent of the shortest decimal representation instead of
 * multiplying in binary. `decimals` may be negative (roundTo(1234, -2) = 1200).
 * Non-finite x is returned unchanged; a non-integer `decimals` throws RangeError.
 */
export function roundTo(x: number, decimals: number): number {
  if (!Number.isInteger(decimals)) throw new RangeError(`decimals must be an integer, got ${decimals}`);
  if (!Number.isFinite(x) || x === 0) return x;
  const sign = x < 0 ? -1 : 1;
  const rounded = shiftDecimal(Math.round(shiftDecimal(Math.abs(x), decimals)), -decimals);
  return rounded === 0 ? 0 : sign * rounded;
}
