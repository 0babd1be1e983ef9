/**
 * Projection from accelerated conditions.
 *
 * Q10 rule of thumb (common practice, no published source): reaction rates grow
 * by a factor Q10 for each 10 °C, so time at T_store ≈ time at T_acc ×
 * Q10^((T_acc - T_store)/10). Q10 = 2 is the usual cautious choice. It is a rule
 * of thumb, not a prediction.
 *
 * Arrhenius: k = A·exp(-Ea/(R·T)); fitting ln k against 1/T (kelvin) gives
 * slope -Ea/R. Pure functions: no I/O, no clock.
 */
import { linearFit } from './regression';
import { KELVIN_OFFSET } from './units';

/** Molar gas constant, J/(mol·K) (CODATA 2018 exact value). */
export const GAS_CONSTANT = 8.314462618;

export interface Q10Input {
  /** Time the product passed at the accelerated temperature (any unit; the result is in the same unit). */
  months: number;
  tAccC: number;
  tStoreC: number;
  q10: number;
}

export interface Q10Projection {
  /** Projected time at the storage temperature, same unit as the input; null on invalid input. */
  months: number | null;
  /** Q10^((T_acc - T_store)/10), or null. */
  factor: number | null;
  message: string;
}

/** Project a time at an accelerated temperature to the storage temperature with a Q10 factor. */
export function projectWithQ10(input: Q10Input): Q10Projection {
  const { months, tAccC, tStoreC, q10 } = input;
  if (!Number.isFinite(q10) || q10 <= 0) {
    return { months: null, factor: null, message: `Q10 must be a positive number; got ${q10}.` };
  }
  if (!Number.isFinite(months) || months < 0) {
    return { months: null, factor: null, message: `The time at the accelerated temperature must be a number of at least 0; got ${months}.` };
  }
  if (!Number.isFinite(tAccC) || !Number.isFinite(tStoreC)) {
    return { months: null, factor: null, message: 'Both temperatures must be numbers (°C).' };
  }
  const factor = q10 ** ((tAccC - tStoreC) / 10);
  const projected = months * factor;
  if (!Number.isFinite(factor) || !Number.isFinite(projected)) {
    return { months: null, factor: null, message: 'The projection is out of range.' };
  }
  const warn = tAccC < tStoreC ? ' The "accelerated" temperature is below the storage temperature, so the figure shrinks.' : '';
  return {
    months: projected,
    factor,
    message: `Q10 = ${q10}: ${months.toFixed(2)} at ${tAccC} °C ≈ ${projected.toFixed(2)} at ${tStoreC} °C (factor ${factor.toFixed(3)}). A rule of thumb, not a prediction.${warn}`,
  };
}

export interface RateAtTemperature {
  tempC: number;
  /** Rate constant (any consistent unit), must be > 0. */
  k: number;
}

export interface ArrheniusResult {
  /** Activation energy, kJ/mol; null when the fit could not be made. */
  eaKJPerMol: number | null;
  /** Ea/R in kelvin. */
  eaOverR: number | null;
  /** ln A (same unit as k). */
  lnA: number | null;
  rSquared: number | null;
  /** Q10 implied by the fitted Ea between the two given temperatures. */
  q10: number | null;
  q10Between: { fromC: number; toC: number };
  temperatures: number;
  message: string;
}

/**
 * Fit ln k against 1/T (kelvin) and report Ea, R² and the Q10 implied between
 * two temperatures (default 25 and 35 °C):
 * Q10 = exp((Ea/R)·(1/T1 - 1/T2)·10/(T2 - T1)).
 * Needs rates at 3 or more distinct temperatures, all positive.
 */
export function arrheniusFit(
  rates: readonly RateAtTemperature[],
  between: { fromC: number; toC: number } = { fromC: 25, toC: 35 },
): ArrheniusResult {
  const empty = (message: string, temperatures = 0): ArrheniusResult => ({
    eaKJPerMol: null,
    eaOverR: null,
    lnA: null,
    rSquared: null,
    q10: null,
    q10Between: between,
    temperatures,
    message,
  });
  if (rates.some((r) => !Number.isFinite(r.tempC) || !Number.isFinite(r.k))) {
    return empty('Some temperatures or rates are not finite numbers.');
  }
  if (rates.some((r) => r.tempC <= -KELVIN_OFFSET)) return empty('Temperatures must be above absolute zero.');
  const nonPositive = rates.filter((r) => r.k <= 0);
  if (nonPositive.length > 0) {
    return empty(
      `Rates must be positive to take logarithms; ${nonPositive.length} are zero or negative (at ${nonPositive.map((r) => `${r.tempC} °C`).join(', ')}).`,
    );
  }
  const distinct = new Set(rates.map((r) => r.tempC)).size;
  if (distinct < 3) {
    const dup = rates.length > distinct ? ` (${rates.length} rates, but repeated temperatures count once)` : '';
    return empty(`Needs rates at 3 or more different temperatures; have ${distinct}${dup}.`, distinct);
  }
  if (
    !Number.isFinite(between.fromC) ||
    !Number.isFinite(between.toC) ||
    between.fromC === between.toC ||
    Math.min(between.fromC, between.toC) <= -KELVIN_OFFSET
  ) {
    return empty('The Q10 temperatures must be two different finite temperatures above absolute zero.', distinct);
  }
  const fit = linearFit(rates.map((r) => ({ x: 1 / (r.tempC + KELVIN_OFFSET), y: Math.log(r.k) })));
  if (!fit) return empty('The rates could not be fitted.', distinct);
  const eaOverR = -fit.slope;
  const eaKJPerMol = (eaOverR * GAS_CONSTANT) / 1000;
  const t1 = between.fromC + KELVIN_OFFSET;
  const t2 = between.toC + KELVIN_OFFSET;
  const q10 = Math.exp(eaOverR * (1 / t1 - 1 / t2) * (10 / (between.toC - between.fromC)));
  if (![eaOverR, eaKJPerMol, q10, fit.intercept].every(Number.isFinite)) {
    return empty('The fit gave values out of range.', distinct);
  }
  const note = eaOverR <= 0 ? ' Rates do not rise with temperature, so the Arrhenius model does not describe these data.' : '';
  return {
    eaKJPerMol,
    eaOverR,
    lnA: fit.intercept,
    rSquared: fit.rSquared,
    q10,
    q10Between: between,
    temperatures: distinct,
    message: `Arrhenius fit over ${distinct} temperatures: Ea = ${eaKJPerMol.toFixed(1)} kJ/mol${fit.rSquared === null ? '' : `, R² = ${fit.rSquared.toFixed(3)}`}; implied Q10 between ${between.fromC} and ${between.toC} °C = ${q10.toFixed(2)}.${note}`,
  };
}
