import { describe, expect, it } from 'vitest';
import {
  ChamberSummaryAccumulator,
  DEFAULT_RH_TOLERANCE,
  DEFAULT_TOLERANCE_C,
  RCF_CONSTANT,
  STANDARD_GRAVITY,
  downsampleMinMax,
  meanKineticTemperature,
  relativeCentrifugalForce,
  summarizeChamberLog,
  type ChamberReading,
} from '../../shared/compute/storage';
import { celsiusToFahrenheit, celsiusToKelvin, fahrenheitToCelsius, kelvinToCelsius } from '../../shared/compute/units';

const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 0, 5, 8, 0, 0);

describe('temperature units', () => {
  it('converts Fahrenheit by t/°C = (t/°F - 32)/1.8', () => {
    // NIST SP 811 (2008), Appendix B.8: t/°C = (t/°F - 32)/1.8 (from memory); water boils at 212 °F = 100 °C,
    // freezes at 32 °F = 0 °C, and the scales cross at -40.
    expect(fahrenheitToCelsius(212)).toBe(100);
    expect(fahrenheitToCelsius(32)).toBe(0);
    expect(fahrenheitToCelsius(-40)).toBe(-40);
    expect(celsiusToFahrenheit(100)).toBe(212);
  });

  it('converts kelvin with the 273.15 offset', () => {
    // SI Brochure, 9th ed. (BIPM 2019), 2.3.1: t/°C = T/K - 273.15.
    expect(celsiusToKelvin(25)).toBeCloseTo(298.15, 12);
    expect(kelvinToCelsius(273.15)).toBe(0);
  });
});

describe('relativeCentrifugalForce', () => {
  it('uses a constant equal to (2π/60)² / g to 4 significant digits', () => {
    // RCF = r·ω²/g with ω = 2π·rpm/60 and g = 9.80665 m/s² = 980.665 cm/s² (standard gravity, 3rd CGPM 1901).
    expect(STANDARD_GRAVITY).toBe(9.80665);
    const fromPhysics = (2 * Math.PI / 60) ** 2 / 980.665;
    expect(Number(fromPhysics.toPrecision(4))).toBe(RCF_CONSTANT);
    // 1.118e-5 x r x rpm² (from memory).
    expect(RCF_CONSTANT).toBe(1.118e-5);
  });

  it('3000 rpm at 10 cm is about 1006 g', () => {
    // 1.118e-5 x 10 x 3000² = 1006.2 (from memory formula); physics: 0.10 m x (2π x 50 /s)² / 9.80665 = 1006.4.
    const rcf = relativeCentrifugalForce(3000, 10);
    expect(Math.round(rcf)).toBe(1006);
    const physics = (0.1 * (2 * Math.PI * 3000 / 60) ** 2) / STANDARD_GRAVITY;
    expect(Math.abs(rcf - physics) / physics).toBeLessThan(5e-4);
    expect(relativeCentrifugalForce(0, 10)).toBe(0);
    expect(() => relativeCentrifugalForce(-1, 10)).toThrow(RangeError);
  });
});

describe('meanKineticTemperature', () => {
  it('returns a constant temperature unchanged', () => {
    // Haynes 1971 formula as given in USP <1160> and the ICH Q1A(R2) glossary: for equal T_i,
    // -ln(exp(-ΔH/RT)) = ΔH/RT, so T_mk = T.
    expect(meanKineticTemperature([25])).toBeCloseTo(25, 9);
    expect(meanKineticTemperature([25, 25, 25, 25])).toBeCloseTo(25, 9);
    expect(meanKineticTemperature([4, 4, 4])).toBeCloseTo(4, 9);
  });

  it('20 and 30 °C give 26.26 °C', () => {
    // Computed from the Haynes formula with ΔH/R = 10 000 K (DESIGN.md computation 4; USP <1160>).
    expect(meanKineticTemperature([20, 30]).toFixed(2)).toBe('26.26');
    expect(meanKineticTemperature([30, 20]).toFixed(2)).toBe('26.26');
    // MKT weights warm readings more than the arithmetic mean does.
    expect(meanKineticTemperature([20, 30])).toBeGreaterThan(25);
  });

  it('stays stable over a year of minute readings', () => {
    // 525 600 = 365 x 24 x 60 readings; alternating 20/30 °C must give the two-reading figure
    // (constructed edge case: the mean of exp(-ΔH/RT) is the same for any even count).
    const n = 525_600;
    const temps = new Array<number>(n);
    for (let i = 0; i < n; i++) temps[i] = i % 2 === 0 ? 20 : 30;
    expect(meanKineticTemperature(temps)).toBeCloseTo(meanKineticTemperature([20, 30]), 8);
    expect(meanKineticTemperature(new Array<number>(n).fill(25))).toBeCloseTo(25, 8);
  });

  it('does not underflow at extreme temperatures or ΔH/R', () => {
    // Constructed edge cases: exp(-10000/10 K) = exp(-1000) and exp(-1e6/298 K) underflow to 0 in binary64,
    // which a direct sum would turn into ln(0); a constant temperature must still return itself.
    expect(Math.exp(-1000)).toBe(0);
    expect(meanKineticTemperature([-263.15, -263.15])).toBeCloseTo(-263.15, 6);
    expect(meanKineticTemperature([25, 25], 1e6)).toBeCloseTo(25, 6);
    // And the warmest reading dominates, but never exceeds the maximum.
    const mkt = meanKineticTemperature([-263.15, 25], 1e6);
    expect(mkt).toBeLessThanOrEqual(25);
    expect(mkt).toBeGreaterThan(-263.15);
  });

  it('rejects empty input and impossible temperatures', () => {
    // Constructed edge cases.
    expect(() => meanKineticTemperature([])).toThrow(RangeError);
    expect(() => meanKineticTemperature([-300])).toThrow(RangeError);
    expect(() => meanKineticTemperature([Number.NaN])).toThrow(RangeError);
    expect(() => meanKineticTemperature([25], 0)).toThrow(RangeError);
  });
});

/** Hourly readings from T0 (constructed edge case). */
function hourly(temps: number[], rh?: Array<number | null>): ChamberReading[] {
  return temps.map((tempC, i) => ({ at: T0 + i * HOUR, tempC, rh: rh ? rh[i] : undefined }));
}

describe('summarizeChamberLog', () => {
  // ICH Q1A(R2) 2.1.7.1: accelerated storage 40 °C ± 2 °C / 75 % RH ± 5 % RH; those tolerances are the defaults.
  it('uses the ICH Q1A(R2) tolerances ±2 °C / ±5 % RH by default', () => {
    expect(DEFAULT_TOLERANCE_C).toBe(2);
    expect(DEFAULT_RH_TOLERANCE).toBe(5);
  });

  it('summarizes an accelerated-chamber log with time-weighted excursions', () => {
    // Constructed edge case around the ICH 40 ± 2 °C band: 42.0 is on the limit (in); 43 and 44 are out
    // for two hourly intervals; 37.5 is out for one; the log ends in tolerance.
    const log = hourly([40, 42, 43, 44, 40, 37.5, 40]);
    const s = summarizeChamberLog(log, { setpointC: 40 });
    expect(s.count).toBe(7);
    expect(s.first).toBe(T0);
    expect(s.last).toBe(T0 + 6 * HOUR);
    expect(s.spanHours).toBe(6);
    expect(s.minC).toBe(37.5);
    expect(s.maxC).toBe(44);
    expect(s.meanC).toBeCloseTo((40 + 42 + 43 + 44 + 40 + 37.5 + 40) / 7, 12);
    expect(s.mktC).toBeCloseTo(meanKineticTemperature(log.map((r) => r.tempC)), 12);
    expect(s.hoursOutOfTolerance).toBe(3);
    expect(s.excursions).toEqual([
      { start: T0 + 2 * HOUR, end: T0 + 4 * HOUR, hours: 2, peakC: 44, ongoing: false },
      { start: T0 + 5 * HOUR, end: T0 + 6 * HOUR, hours: 1, peakC: 37.5, ongoing: false },
    ]);
    expect(s.rh).toBeNull();
    expect(s.largestGapHours).toBe(1);
  });

  it('weights by time, not by reading count, and marks an excursion still open at the end', () => {
    // Constructed edge case: readings at 0, 0.5 h, 3 h, 4 h; the 0.5 h reading is out, so 2.5 h are out;
    // the last reading is out too but adds no time.
    const log: ChamberReading[] = [
      { at: T0, tempC: 25 },
      { at: T0 + 0.5 * HOUR, tempC: 28 },
      { at: T0 + 3 * HOUR, tempC: 25 },
      { at: T0 + 4 * HOUR, tempC: 20 },
    ];
    const s = summarizeChamberLog(log, { setpointC: 25 });
    expect(s.hoursOutOfTolerance).toBe(2.5);
    expect(s.excursions).toEqual([
      { start: T0 + 0.5 * HOUR, end: T0 + 3 * HOUR, hours: 2.5, peakC: 28, ongoing: false },
      { start: T0 + 4 * HOUR, end: T0 + 4 * HOUR, hours: 0, peakC: 20, ongoing: true },
    ]);
    expect(s.largestGapHours).toBe(2.5);
  });

  it('summarizes RH and its excursions when an RH setpoint is given', () => {
    // Constructed edge case on the ICH 75 ± 5 % RH band: 81 % is out for one hour; a missing RH counts as in.
    const log = hourly([40, 40, 40, 40], [75, 81, null, 70]);
    const s = summarizeChamberLog(log, { setpointC: 40, rhSetpoint: 75 });
    expect(s.rh).toEqual({
      count: 3,
      min: 70,
      max: 81,
      mean: (75 + 81 + 70) / 3,
      hoursOutOfTolerance: 1,
      excursions: [{ start: T0 + HOUR, end: T0 + 2 * HOUR, hours: 1, peakRh: 81, ongoing: false }],
    });
    const noSetpoint = summarizeChamberLog(log, { setpointC: 40 });
    expect(noSetpoint.rh?.hoursOutOfTolerance).toBeNull();
    expect(noSetpoint.rh?.excursions).toEqual([]);
  });

  it('accepts Date or epoch ms, sorts an unsorted copy, and never mutates the input', () => {
    // Constructed edge case.
    const sorted = hourly([40, 42, 43, 44, 40, 37.5, 40]);
    const shuffled: ChamberReading[] = [sorted[3], sorted[0], sorted[6], sorted[1], sorted[5], sorted[2], sorted[4]].map(
      (r, i) => (i % 2 === 0 ? { ...r, at: new Date(r.at as number) } : r),
    );
    const before = shuffled.map((r) => r.at);
    expect(summarizeChamberLog(shuffled, { setpointC: 40 })).toEqual(summarizeChamberLog(sorted, { setpointC: 40 }));
    expect(shuffled.map((r) => r.at)).toEqual(before);
  });

  it('restricts to from..to inclusive and counts the rest as ignored', () => {
    // Constructed edge case.
    const log = hourly([40, 44, 40, 40, 44]);
    const s = summarizeChamberLog(log, { setpointC: 40, from: new Date(T0 + HOUR), to: T0 + 3 * HOUR });
    expect(s.count).toBe(3);
    expect(s.ignored).toBe(2);
    expect(s.first).toBe(T0 + HOUR);
    expect(s.hoursOutOfTolerance).toBe(1);
  });

  it('returns nulls for an empty log', () => {
    // Constructed edge case.
    const s = summarizeChamberLog([], { setpointC: 25 });
    expect(s).toMatchObject({ count: 0, first: null, last: null, minC: null, maxC: null, meanC: null, mktC: null });
    expect(s.hoursOutOfTolerance).toBe(0);
    expect(s.excursions).toEqual([]);
  });

  // Its speed is measured by `npm run bench` (chamber), not here: a timed test fails on a busy machine.
  it('summarises a year of minute readings', () => {
    // Constructed edge case: 525 600 one-minute readings at 25 °C with one 90-minute excursion to 31 °C.
    const n = 525_600;
    const log: ChamberReading[] = new Array(n);
    for (let i = 0; i < n; i++) {
      log[i] = { at: T0 + i * 60_000, tempC: i >= 1000 && i < 1090 ? 31 : 25 + ((i % 7) - 3) * 0.1, rh: 60 };
    }
    const s = summarizeChamberLog(log, { setpointC: 25, rhSetpoint: 60 });
    expect(s.count).toBe(n);
    expect(s.hoursOutOfTolerance).toBeCloseTo(1.5, 9);
    expect(s.excursions).toHaveLength(1);
    expect(s.excursions[0]).toMatchObject({ start: T0 + 1000 * 60_000, end: T0 + 1090 * 60_000, peakC: 31 });
    expect(s.rh?.hoursOutOfTolerance).toBe(0);
  });
});

describe('ChamberSummaryAccumulator', () => {
  it('streams to the same result as the batch function', () => {
    // Constructed edge case.
    const log = hourly([40, 42, 43, 44, 40, 37.5, 40], [75, 75, 80.5, 75, 75, 75, 75]);
    const acc = new ChamberSummaryAccumulator({ setpointC: 40, rhSetpoint: 75 });
    for (const r of log) acc.add(r);
    expect(acc.result()).toEqual(summarizeChamberLog(log, { setpointC: 40, rhSetpoint: 75 }));
  });

  it('rejects readings out of time order and invalid values', () => {
    // Constructed edge cases; equal timestamps are allowed.
    const acc = new ChamberSummaryAccumulator({ setpointC: 25 });
    acc.add({ at: T0 + HOUR, tempC: 25 });
    acc.add({ at: T0 + HOUR, tempC: 25 });
    expect(() => acc.add({ at: T0, tempC: 25 })).toThrow(RangeError);
    expect(() => acc.add({ at: T0 + 2 * HOUR, tempC: Number.NaN })).toThrow(RangeError);
    expect(() => acc.add({ at: new Date('not a date'), tempC: 25 })).toThrow(RangeError);
    expect(acc.result().count).toBe(2);
  });
});

describe('downsampleMinMax', () => {
  it('keeps each bucket’s min and max in time order', () => {
    // Constructed edge case: 10 points, 2 buckets of 5.
    const v = [5, 1, 9, 3, 4, 2, 8, 0, 7, 6];
    const points = v.map((value, t) => ({ t, v: value }));
    expect(downsampleMinMax(points, 2)).toEqual([
      { t: 1, v: 1 },
      { t: 2, v: 9 },
      { t: 6, v: 8 },
      { t: 7, v: 0 },
    ]);
  });

  it('returns a copy when the series already fits and one point for a flat bucket', () => {
    // Constructed edge cases.
    const points = [{ t: 0, v: 1 }, { t: 1, v: 2 }];
    const out = downsampleMinMax(points, 1);
    expect(out).toEqual(points);
    expect(out).not.toBe(points);
    expect(downsampleMinMax([0, 1, 2, 3, 4, 5].map((t) => ({ t, v: 3 })), 2)).toEqual([{ t: 0, v: 3 }, { t: 3, v: 3 }]);
    expect(() => downsampleMinMax(points, 0)).toThrow(RangeError);
  });

  it('reduces a year of minutes to at most 2 x buckets points and keeps the extremes', () => {
    // Constructed edge case.
    const n = 525_600;
    const points = Array.from({ length: n }, (_, i) => ({ t: i, v: Math.sin(i / 500) + (i === 123_457 ? 5 : 0) }));
    const out = downsampleMinMax(points, 800);
    expect(out.length).toBeLessThanOrEqual(1600);
    expect(out.some((p) => p.t === 123_457 && p.v > 5)).toBe(true);
    for (let i = 1; i < out.length; i++) expect(out[i].t).toBeGreaterThan(out[i - 1].t);
  });
});
