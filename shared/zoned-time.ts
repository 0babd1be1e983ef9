/**
 * Wall-clock times in an IANA time zone and UTC instants, with Intl only (no time-zone library).
 * A "wall-clock" value is written as epoch milliseconds as if the local date and time were UTC,
 * e.g. 2026-03-25 14:00 in Europe/Berlin is Date.UTC(2026, 2, 25, 14, 0).
 * Used by the chamber-log parser (times without an offset are in the lab's zone) and by the client
 * (labels and period pickers in the lab's zone, whatever the browser's zone).
 */

const MINUTE = 60_000;
const DAY = 86_400_000;
/** Offsets are cached per quarter hour of UTC: zone transitions fall on quarter hours. */
const BUCKET = 15 * MINUTE;

const formatters = new Map<string, Intl.DateTimeFormat>();

function formatter(timeZone: string): Intl.DateTimeFormat {
  let f = formatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-US', {
      timeZone,
      hourCycle: 'h23',
      year: 'numeric',
      month: 'numeric',
      day: 'numeric',
      hour: 'numeric',
      minute: 'numeric',
      second: 'numeric',
      era: 'short',
    });
    formatters.set(timeZone, f);
  }
  return f;
}

/** True when Intl knows the zone name. */
export function isValidTimeZone(timeZone: string): boolean {
  try {
    formatter(timeZone);
    return true;
  } catch {
    return false;
  }
}

/** Offset of the zone at an instant, in ms (local wall clock minus UTC), without caching. */
export function zoneOffsetMs(timeZone: string, utcMs: number): number {
  if (timeZone === 'UTC' || timeZone === 'Etc/UTC') return 0;
  const whole = Math.floor(utcMs / 1000) * 1000;
  const p: Record<string, string> = {};
  for (const part of formatter(timeZone).formatToParts(new Date(whole))) p[part.type] = part.value;
  let year = Number(p.year);
  if (p.era && /^B/i.test(p.era)) year = 1 - year;
  const hour = Number(p.hour) % 24;
  const asUtc = Date.UTC(year, Number(p.month) - 1, Number(p.day), hour, Number(p.minute), Number(p.second));
  // Date.UTC maps years 0-99 to 1900-1999; not a concern for lab data, but keep it exact.
  const fixed = year >= 0 && year < 100 ? new Date(asUtc).setUTCFullYear(year) : asUtc;
  return fixed - whole;
}

/** How a wall-clock time maps to instants around a daylight-saving change. */
export type WallClockKind = 'unique' | 'repeated' | 'skipped';

/** Converts between UTC instants and wall-clock times of one zone, caching offsets. */
export class ZoneClock {
  private readonly cache = new Map<number, number>();
  readonly utc: boolean;

  constructor(readonly timeZone: string) {
    if (!isValidTimeZone(timeZone)) throw new RangeError(`unknown time zone '${timeZone}'`);
    this.utc = timeZone === 'UTC' || timeZone === 'Etc/UTC';
  }

  /** Offset (local - UTC) at an instant, ms. */
  offsetAt(utcMs: number): number {
    if (this.utc) return 0;
    const key = Math.floor(utcMs / BUCKET);
    let o = this.cache.get(key);
    if (o === undefined) {
      o = zoneOffsetMs(this.timeZone, key * BUCKET);
      if (this.cache.size > 200_000) this.cache.clear();
      this.cache.set(key, o);
    }
    return o;
  }

  /** The wall-clock reading (as if UTC) at an instant. */
  toWallClock(utcMs: number): number {
    return utcMs + this.offsetAt(utcMs);
  }

  /**
   * The instants whose wall clock reads `wallMs`. Normally one (earlier = later). In the hour
   * repeated when clocks go back, two. In the hour skipped when clocks go forward, none: then the
   * instant the clock shows after moving forward (earlier = later = wall time read with the offset
   * before the change, as RFC 5545 and ECMAScript Temporal's 'compatible' choice do).
   */
  instantsOf(wallMs: number): { earlier: number; later: number; kind: WallClockKind } {
    if (this.utc) return { earlier: wallMs, later: wallMs, kind: 'unique' };
    const before = this.offsetAt(wallMs - DAY);
    const after = this.offsetAt(wallMs + DAY);
    const u1 = wallMs - before;
    if (before === after) return { earlier: u1, later: u1, kind: 'unique' };
    const u2 = wallMs - after;
    const ok1 = this.offsetAt(u1) === before;
    const ok2 = this.offsetAt(u2) === after;
    if (ok1 && ok2) return { earlier: Math.min(u1, u2), later: Math.max(u1, u2), kind: 'repeated' };
    if (ok1) return { earlier: u1, later: u1, kind: 'unique' };
    if (ok2) return { earlier: u2, later: u2, kind: 'unique' };
    return { earlier: u1, later: u1, kind: 'skipped' };
  }

  /**
   * The instant of a wall-clock time. In a repeated hour the earlier instant is taken, unless it lies
   * before `notBefore` and the later one does not (so a logger that writes local time keeps its order
   * through the autumn change).
   */
  toUtc(wallMs: number, notBefore = -Infinity): number {
    const c = this.instantsOf(wallMs);
    if (c.kind === 'repeated' && c.earlier < notBefore && c.later >= notBefore) return c.later;
    return c.earlier;
  }
}

const clocks = new Map<string, ZoneClock>();
/** A shared ZoneClock per zone. */
export function zoneClock(timeZone: string): ZoneClock {
  let c = clocks.get(timeZone);
  if (!c) {
    c = new ZoneClock(timeZone);
    clocks.set(timeZone, c);
  }
  return c;
}

const pad = (n: number, w = 2) => String(n).padStart(w, '0');

/** "YYYY-MM-DD HH:mm" (or with seconds) of an instant in a zone. */
export function formatWallClock(utcMs: number, timeZone: string, seconds = false): string {
  const d = new Date(zoneClock(timeZone).toWallClock(utcMs));
  const date = `${d.getUTCFullYear()}-${pad(d.getUTCMonth() + 1)}-${pad(d.getUTCDate())}`;
  const time = `${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}${seconds ? `:${pad(d.getUTCSeconds())}` : ''}`;
  return `${date} ${time}`;
}

/**
 * Reads a period bound: ISO 8601 with Z or an offset is an instant; "YYYY-MM-DD[THH:mm[:ss[.sss]]]"
 * without an offset is a wall-clock time in the zone (a bare date is that day's midnight).
 * Returns epoch ms, or null when the text is not such a time.
 */
export function parsePeriodBound(text: string, timeZone: string): number | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})(?:\.(\d{1,3}))?)?(Z|[+-]\d{2}:?\d{2})?)?$/.exec(text.trim());
  if (!m) return null;
  const [, y, mo, d, h = '0', mi = '0', s = '0', frac = '0', zone] = m;
  const month = Number(mo);
  const day = Number(d);
  if (month < 1 || month > 12 || day < 1 || day > daysInMonth(Number(y), month)) return null;
  if (Number(h) > 23 || Number(mi) > 59 || Number(s) > 59) return null;
  const wall = Date.UTC(Number(y), month - 1, day, Number(h), Number(mi), Number(s), Number(frac.padEnd(3, '0')));
  if (zone === undefined) return zoneClock(timeZone).toUtc(wall);
  if (zone === 'Z') return wall;
  const sign = zone[0] === '-' ? -1 : 1;
  const digits = zone.slice(1).replace(':', '');
  const offset = sign * (Number(digits.slice(0, 2)) * 60 + Number(digits.slice(2, 4))) * MINUTE;
  return wall - offset;
}

/** Days in a month of the proleptic Gregorian calendar (month 1-12). */
export function daysInMonth(year: number, month: number): number {
  if (month === 2) return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0 ? 29 : 28;
  return month === 4 || month === 6 || month === 9 || month === 11 ? 30 : 31;
}
