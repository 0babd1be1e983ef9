/**
 * Storage-condition computations: centrifuge RCF, mean kinetic temperature, chamber-log summaries
 * (batch and streaming) and min/max downsampling for charts. Pure functions; no I/O.
 */
import { KELVIN_OFFSET } from './units';

/** RCF constant in 1/(cm·rpm²): RCF = 1.118e-5 x r(cm) x rpm² (from memory; = (2π/60)² / 980.665 cm/s²). */
export const RCF_CONSTANT = 1.118e-5;

/** Standard acceleration of gravity, m/s² (3rd CGPM, 1901). */
export const STANDARD_GRAVITY = 9.80665;

/** Default ΔH/R for mean kinetic temperature, K (ΔH = 83.144 kJ/mol; USP <1160>, ICH Q1A(R2) glossary). */
export const MKT_DEFAULT_DELTA_H_OVER_R = 10_000;

/** Default chamber tolerances (ICH Q1A(R2): ±2 °C, ±5 % RH). */
export const DEFAULT_TOLERANCE_C = 2;
export const DEFAULT_RH_TOLERANCE = 5;

const MS_PER_HOUR = 3_600_000;
/** Float slack when testing a reading against its tolerance band. */
const EPS = 1e-9;

/** Relative centrifugal force in multiples of g: 1.118e-5 x radius(cm) x rpm². */
export function relativeCentrifugalForce(rpm: number, radiusCm: number): number {
  if (!Number.isFinite(rpm) || !Number.isFinite(radiusCm) || rpm < 0 || radiusCm < 0) {
    throw new RangeError('rpm and radius must be finite and not negative');
  }
  return RCF_CONSTANT * radiusCm * rpm * rpm;
}

/**
 * Running log-sum-exp of x_i = -ΔH/(R·T_i), so that Σ exp(x_i) never underflows
 * however many readings there are or however cold they are.
 */
class MktAccumulator {
  private max = -Infinity;
  private scaledSum = 0;
  private n = 0;

  constructor(private readonly deltaHOverR: number) {}

  add(tempC: number): void {
    const kelvin = tempC + KELVIN_OFFSET;
    if (!(kelvin > 0)) throw new RangeError(`temperature ${tempC} °C is at or below absolute zero`);
    const x = -this.deltaHOverR / kelvin;
    if (x > this.max) {
      this.scaledSum = this.scaledSum * Math.exp(this.max - x) + 1;
      this.max = x;
    } else {
      this.scaledSum += Math.exp(x - this.max);
    }
    this.n++;
  }

  /** MKT in °C, or null with no readings. */
  resultC(): number | null {
    if (this.n === 0) return null;
    // ln(Σ exp(x_i) / n) = max + ln(scaledSum) - ln(n)
    const lnMean = this.max + Math.log(this.scaledSum) - Math.log(this.n);
    return this.deltaHOverR / -lnMean - KELVIN_OFFSET;
  }
}

/**
 * Mean kinetic temperature (Haynes 1971, as in USP <1160> and the ICH Q1A(R2) glossary):
 * T_mk = (ΔH/R) / (-ln(Σ exp(-ΔH/(R·T_i)) / n)), T in kelvin; returns °C.
 * Computed with a log-sum-exp shift so large n and extreme temperatures do not underflow.
 * Throws RangeError on no readings, a non-finite reading or one at or below absolute zero.
 */
export function meanKineticTemperature(
  tempsC: ReadonlyArray<number>,
  deltaHOverR: number = MKT_DEFAULT_DELTA_H_OVER_R,
): number {
  if (!(deltaHOverR > 0) || !Number.isFinite(deltaHOverR)) throw new RangeError('deltaHOverR must be a positive number');
  if (tempsC.length === 0) throw new RangeError('mean kinetic temperature needs at least one reading');
  const acc = new MktAccumulator(deltaHOverR);
  for (const t of tempsC) {
    if (!Number.isFinite(t)) throw new RangeError(`temperature must be finite, got ${t}`);
    acc.add(t);
  }
  return acc.resultC() as number;
}

/** One chamber-logger reading. */
export interface ChamberReading {
  /** Time of the reading: Date or epoch milliseconds. */
  at: Date | number;
  tempC: number;
  /** Relative humidity, %; null or absent when the logger has none. */
  rh?: number | null;
}

/** Options of a chamber-log summary. */
export interface ChamberSummaryOptions {
  setpointC: number;
  /** ± °C; default 2 (ICH Q1A(R2)). */
  toleranceC?: number;
  /** RH setpoint, %; RH tolerance is only judged when given. */
  rhSetpoint?: number | null;
  /** ± % RH; default 5 (ICH Q1A(R2)). */
  rhTolerance?: number;
  /** Only readings at or after this instant are used. */
  from?: Date | number | null;
  /** Only readings at or before this instant are used. */
  to?: Date | number | null;
}

/** A run of consecutive out-of-tolerance intervals. Times are epoch ms. */
export interface Excursion {
  /** Time of the first out-of-tolerance reading. */
  start: number;
  /** Time of the first reading back in tolerance, or of the last reading if the log ends out of tolerance. */
  end: number;
  hours: number;
  /** True when the log ends before the excursion does. */
  ongoing: boolean;
}

/** Temperature excursion. */
export interface TemperatureExcursion extends Excursion {
  /** The temperature furthest from the setpoint during the excursion, °C. */
  peakC: number;
}

/** RH excursion. */
export interface RhExcursion extends Excursion {
  /** The RH furthest from the setpoint during the excursion, %. */
  peakRh: number;
}

interface TrackedExcursion extends Excursion {
  peak: number;
}

/** RH part of a chamber summary (present when at least one reading had RH). */
export interface RhSummary {
  count: number;
  min: number;
  max: number;
  mean: number;
  /** Null when no RH setpoint was given. */
  hoursOutOfTolerance: number | null;
  excursions: RhExcursion[];
}

/** Result of {@link summarizeChamberLog}. Times are epoch ms; statistics are null for an empty log. */
export interface ChamberSummary {
  count: number;
  /** Readings dropped by the from/to filter. */
  ignored: number;
  first: number | null;
  last: number | null;
  minC: number | null;
  maxC: number | null;
  meanC: number | null;
  mktC: number | null;
  /** Hours covered by the log (last - first). */
  spanHours: number;
  /** Longest time between two consecutive readings, hours (a logger gap). */
  largestGapHours: number;
  hoursOutOfTolerance: number;
  excursions: TemperatureExcursion[];
  rh: RhSummary | null;
}

function toMs(at: Date | number): number {
  return typeof at === 'number' ? at : at.getTime();
}

/** Tracks time-weighted out-of-tolerance hours and merged excursions for one quantity. */
class ExcursionTracker {
  hoursOut = 0;
  readonly excursions: TrackedExcursion[] = [];
  private open: TrackedExcursion | null = null;
  private prevAt = NaN;

  constructor(
    private readonly setpoint: number,
    private readonly tolerance: number,
  ) {}

  /** value null = not measured: its interval counts as in tolerance and ends any excursion. */
  add(at: number, value: number | null): void {
    if (this.open) {
      // The interval [prevAt, at) belongs to the excursion started by an out reading.
      const h = (at - this.prevAt) / MS_PER_HOUR;
      this.hoursOut += h;
      this.open.hours += h;
      this.open.end = at;
    }
    const out = value !== null && Math.abs(value - this.setpoint) > this.tolerance + EPS;
    if (out) {
      if (!this.open) {
        this.open = { start: at, end: at, hours: 0, peak: value, ongoing: true };
        this.excursions.push(this.open);
      } else if (Math.abs(value - this.setpoint) > Math.abs(this.open.peak - this.setpoint)) {
        this.open.peak = value;
      }
    } else if (this.open) {
      this.open.ongoing = false;
      this.open = null;
    }
    this.prevAt = at;
  }
}

/**
 * Streaming chamber-log summary: feed readings in time order with add(), read result() at any time.
 * Memory is O(number of excursions), so a year of minute readings can be summarized while it uploads.
 *
 * Out-of-tolerance rule (time-weighted): a reading is out when |value - setpoint| > tolerance
 * (a reading exactly on the limit is in). The interval from a reading to the next one counts as
 * out when the reading that starts it is out; the last reading adds no time. Consecutive out
 * intervals merge into one excursion, from the first out reading to the next in-tolerance reading.
 * RH is judged the same way, only when an RH setpoint is given; a reading without RH counts as in
 * tolerance for RH.
 *
 * add() throws RangeError on a non-finite time or temperature, or on a reading earlier than the
 * previous one (equal times are allowed).
 */
export class ChamberSummaryAccumulator {
  private readonly from: number;
  private readonly to: number;
  private readonly temp: ExcursionTracker;
  private readonly rhTracker: ExcursionTracker | null;
  private readonly mkt = new MktAccumulator(MKT_DEFAULT_DELTA_H_OVER_R);
  private count = 0;
  private ignored = 0;
  private first = NaN;
  private last = NaN;
  private minC = Infinity;
  private maxC = -Infinity;
  private sumC = 0;
  private largestGapMs = 0;
  private rhCount = 0;
  private rhMin = Infinity;
  private rhMax = -Infinity;
  private rhSum = 0;

  constructor(opts: ChamberSummaryOptions) {
    const toleranceC = opts.toleranceC ?? DEFAULT_TOLERANCE_C;
    const rhTolerance = opts.rhTolerance ?? DEFAULT_RH_TOLERANCE;
    if (!Number.isFinite(opts.setpointC)) throw new RangeError('setpointC must be finite');
    if (!(toleranceC >= 0) || !(rhTolerance >= 0)) throw new RangeError('tolerances must not be negative');
    this.from = opts.from == null ? -Infinity : toMs(opts.from);
    this.to = opts.to == null ? Infinity : toMs(opts.to);
    this.temp = new ExcursionTracker(opts.setpointC, toleranceC);
    this.rhTracker = opts.rhSetpoint == null ? null : new ExcursionTracker(opts.rhSetpoint, rhTolerance);
  }

  /** Adds one reading (must not be earlier than the previous one). */
  add(reading: ChamberReading): void {
    const at = toMs(reading.at);
    const t = reading.tempC;
    if (!Number.isFinite(at)) throw new RangeError('reading time is not a valid instant');
    if (!Number.isFinite(t)) throw new RangeError(`reading temperature must be finite, got ${t}`);
    if (at < this.from || at > this.to) {
      this.ignored++;
      return;
    }
    if (this.count > 0) {
      if (at < this.last) throw new RangeError('readings must be added in time order');
      if (at - this.last > this.largestGapMs) this.largestGapMs = at - this.last;
    } else {
      this.first = at;
    }
    this.last = at;
    this.count++;
    if (t < this.minC) this.minC = t;
    if (t > this.maxC) this.maxC = t;
    this.sumC += t;
    this.mkt.add(t);
    this.temp.add(at, t);

    const rh = reading.rh ?? null;
    if (rh !== null && Number.isFinite(rh)) {
      this.rhCount++;
      if (rh < this.rhMin) this.rhMin = rh;
      if (rh > this.rhMax) this.rhMax = rh;
      this.rhSum += rh;
    }
    this.rhTracker?.add(at, rh !== null && Number.isFinite(rh) ? rh : null);
  }

  /** The summary of the readings added so far. */
  result(): ChamberSummary {
    const empty = this.count === 0;
    return {
      count: this.count,
      ignored: this.ignored,
      first: empty ? null : this.first,
      last: empty ? null : this.last,
      minC: empty ? null : this.minC,
      maxC: empty ? null : this.maxC,
      meanC: empty ? null : this.sumC / this.count,
      mktC: this.mkt.resultC(),
      spanHours: empty ? 0 : (this.last - this.first) / MS_PER_HOUR,
      largestGapHours: this.largestGapMs / MS_PER_HOUR,
      hoursOutOfTolerance: this.temp.hoursOut,
      excursions: this.temp.excursions.map(({ peak, ...e }) => ({ ...e, peakC: peak })),
      rh:
        this.rhCount === 0
          ? null
          : {
              count: this.rhCount,
              min: this.rhMin,
              max: this.rhMax,
              mean: this.rhSum / this.rhCount,
              hoursOutOfTolerance: this.rhTracker ? this.rhTracker.hoursOut : null,
              excursions: this.rhTracker ? this.rhTracker.excursions.map(({ peak, ...e }) => ({ ...e, peakRh: peak })) : [],
            },
    };
  }
}

/**
 * Summarizes a chamber log: count, first/last, min/max/mean, MKT (ΔH/R = 10 000 K),
 * time-weighted hours out of tolerance and merged excursions (rule in {@link ChamberSummaryAccumulator}),
 * and RH figures when readings carry RH. Readings need not be sorted: sortedness is checked in one
 * pass and only an unsorted log is copied and sorted (the input is never mutated).
 */
export function summarizeChamberLog(
  readings: ReadonlyArray<ChamberReading>,
  opts: ChamberSummaryOptions,
): ChamberSummary {
  let sorted = true;
  let prev = -Infinity;
  for (const r of readings) {
    const at = toMs(r.at);
    if (at < prev) {
      sorted = false;
      break;
    }
    prev = at;
  }
  const ordered = sorted ? readings : [...readings].sort((x, y) => toMs(x.at) - toMs(y.at));
  const acc = new ChamberSummaryAccumulator(opts);
  for (const r of ordered) acc.add(r);
  return acc.result();
}

/** A chart point. */
export interface SeriesPoint {
  t: number;
  v: number;
}

/**
 * Reduces a time-ordered series for charting: splits it into `buckets` runs of (nearly) equal
 * point count and keeps each run's minimum and maximum, in time order (one point when they coincide;
 * the first occurrence on ties). Returns at most 2 x buckets points; a series that already fits is
 * returned as a copy. Throws RangeError unless buckets is a positive integer.
 */
export function downsampleMinMax(points: ReadonlyArray<SeriesPoint>, buckets: number): SeriesPoint[] {
  if (!Number.isInteger(buckets) || buckets < 1) throw new RangeError('buckets must be a positive integer');
  const n = points.length;
  if (n <= 2 * buckets) return points.slice();
  const out: SeriesPoint[] = [];
  for (let b = 0; b < buckets; b++) {
    const lo = Math.floor((b * n) / buckets);
    const hi = Math.floor(((b + 1) * n) / buckets);
    if (hi <= lo) continue;
    let iMin = lo;
    let iMax = lo;
    for (let i = lo + 1; i < hi; i++) {
      const v = points[i].v;
      if (v < points[iMin].v) iMin = i;
      if (v > points[iMax].v) iMax = i;
    }
    if (iMin === iMax) out.push(points[iMin]);
    else if (iMin < iMax) out.push(points[iMin], points[iMax]);
    else out.push(points[iMax], points[iMin]);
  }
  return out;
}
