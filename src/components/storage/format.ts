/**
 * Storage figures in words: condition definitions ("45 °C ± 2 °C", "−10 °C 24 h ⇄ 25 °C 24 h",
 * "3000 rpm, 30 min, ≈ 1006 × g"), temperatures, hours and tolerance bands. Pure; no I/O.
 */
import type { ConditionKind, LightSource } from '@shared/domain';
import type { ChamberLogListItem, StorageCondition, ToleranceBand } from '@shared/schemas/storage';

export const KIND_LABELS: Record<ConditionKind, string> = {
  constant: 'Constant temperature',
  cycling: 'Freeze-thaw cycle',
  light: 'Light',
  mechanical: 'Centrifuge',
};

export const LIGHT_LABELS: Record<LightSource, string> = {
  daylight: 'Window daylight',
  uv_cabinet: 'UV cabinet',
};

const DASH = '—';

/** A number with fixed decimals and a true minus sign; null gives a dash. */
export function num(x: number | null | undefined, digits = 1): string {
  if (x == null || !Number.isFinite(x)) return DASH;
  const s = x.toFixed(digits);
  const clean = /^-0(\.0+)?$/.test(s) ? s.slice(1) : s;
  return clean.startsWith('-') ? `−${clean.slice(1)}` : clean;
}

/** A number as short as it can be written (25, 1.5, 0.25), with a true minus sign. */
export function plain(x: number | null | undefined): string {
  if (x == null || !Number.isFinite(x)) return DASH;
  const s = String(Number(x.toPrecision(10)));
  return s.startsWith('-') ? `−${s.slice(1)}` : s;
}

export const tempText = (x: number | null | undefined, digits = 1) => (x == null ? DASH : `${num(x, digits)} °C`);
export const rhText = (x: number | null | undefined, digits = 1) => (x == null ? DASH : `${num(x, digits)} % RH`);

/** Hours: two decimals below 10 h, one above; null (not judged) gives a dash. */
export function hoursText(h: number | null | undefined): string {
  if (h == null) return DASH;
  return `${num(h, h < 10 ? 2 : 1)} h`;
}

/** Relative centrifugal force, as the trade writes it. */
export const rcfText = (rcf: number | null | undefined) => (rcf == null ? DASH : `≈ ${Math.round(rcf)} × g`);

/** The definition of a condition in one line. */
export function conditionDefinition(c: Pick<StorageCondition, 'kind' | 'setpointC' | 'toleranceC' | 'rhPercent' | 'toleranceRh' | 'lowC' | 'highC' | 'hoursLow' | 'hoursHigh' | 'lightSource' | 'rpm' | 'minutes' | 'radiusCm' | 'rcf'>): string {
  switch (c.kind) {
    case 'constant': {
      const t = `${plain(c.setpointC)} °C ± ${plain(c.toleranceC)} °C`;
      return c.rhPercent == null ? t : `${t}, ${plain(c.rhPercent)} % RH ± ${plain(c.toleranceRh)} %`;
    }
    case 'cycling':
      return `${plain(c.lowC)} °C for ${plain(c.hoursLow)} h ⇄ ${plain(c.highC)} °C for ${plain(c.hoursHigh)} h`;
    case 'light':
      return c.lightSource ? LIGHT_LABELS[c.lightSource] : DASH;
    case 'mechanical':
      return `${plain(c.rpm)} rpm, ${plain(c.minutes)} min, ${rcfText(c.rcf)}`;
  }
}

/** What a log is judged against, in words. */
export function bandText(b: ToleranceBand): string {
  if (b.rule === 'setpoint') {
    const t = `${plain(b.setpointC)} °C ± ${plain(b.toleranceC)} °C`;
    return b.rhSetpoint == null ? t : `${t}; ${plain(b.rhSetpoint)} % RH ± ${plain(b.rhTolerance)} %`;
  }
  if (b.rule === 'cycle') {
    return `between ${plain((b.lowC ?? 0) - (b.toleranceC ?? 0))} and ${plain((b.highC ?? 0) + (b.toleranceC ?? 0))} °C (the cycle's ${plain(b.lowC)} / ${plain(b.highC)} °C ± ${plain(b.toleranceC)} °C)`;
  }
  return 'not judged: the condition has no setpoint';
}

/** "0.25 h out of tolerance, 1 excursion" or "in tolerance throughout". */
export function toleranceLine(l: Pick<ChamberLogListItem, 'hoursOutOfTolerance' | 'excursionCount'>): string {
  if (l.hoursOutOfTolerance == null) return 'tolerance not judged';
  if (l.excursionCount === 0) return 'in tolerance throughout';
  return `${hoursText(l.hoursOutOfTolerance)} out of tolerance, ${l.excursionCount} ${l.excursionCount === 1 ? 'excursion' : 'excursions'}`;
}
