/** Values and field names in words, as the screens show them (units, decimals, levels and grades, dates in the lab's zone). */
import { COMPARED_LEVEL_LABELS, type ComparedLevel } from '../../../shared/compute/criteria';
import { relativeCentrifugalForce } from '../../../shared/compute/storage';
import { formatDecimals, formatNumber } from '../../../shared/criterion-text';
import { DECISION_OUTCOME_LABELS, PRODUCT_TYPE_LABELS, STUDY_STATUS_LABELS, type DecisionOutcome, type ProductType, type StudyStatus } from '../../../shared/domain';
import { ROLE_LABELS, type Role } from '../../../shared/roles';
import { LabFormat, AttrInfo, AuditNames, Rec, rec, idOf } from './common';

// ---------------------------------------------------------------- words for values

export const q = (s: string) => `“${s}”`;
export const cut = (s: string, max = 120) => (s.length > max ? `${s.slice(0, max - 1)}…` : s);
export const plural = (n: number, one: string, many = `${one}s`) => `${formatNumber(n)} ${n === 1 ? one : many}`;
export const lowerFirst = (s: string) => (/^[A-Z][a-z]/.test(s) ? s.charAt(0).toLowerCase() + s.slice(1) : s);

/** Ends a sentence with one full stop. */
export function end(s: string): string {
  const t = s.trim();
  return /[.!?…]["”)]?$/.test(t) ? t : `${t}.`;
}

/** "… Reason: it was wrong." */
export function withNote(s: string, note: string | null | undefined, label = 'Reason'): string {
  const n = note?.trim();
  return n ? `${end(s)} ${label}: ${end(cut(n, 500))}` : end(s);
}

export function dateText(date: unknown, fmt: LabFormat): string {
  const m = typeof date === 'string' ? /^(\d{4})-(\d{2})-(\d{2})$/.exec(date) : null;
  if (!m) return typeof date === 'string' ? date : '';
  return (fmt.dateFormat || 'YYYY-MM-DD').replace('YYYY', m[1]).replace('MM', m[2]).replace('DD', m[3]);
}

/** A UTC instant as date and time in the lab's zone and date format, as the screens show times. */
export function instantText(value: unknown, fmt: LabFormat): string {
  if (typeof value !== 'string') return '';
  const t = new Date(value);
  if (Number.isNaN(t.getTime())) return value;
  const p: Record<string, string> = {};
  for (const part of new Intl.DateTimeFormat('en-US', {
    timeZone: fmt.timeZone || 'UTC',
    hourCycle: 'h23',
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
  }).formatToParts(t)) {
    p[part.type] = part.value;
  }
  return `${dateText(`${p.year}-${p.month}-${p.day}`, fmt)} ${p.hour}:${p.minute}`;
}

/** A reading as the Record screen shows it: "5.50", "12000 mPa·s", "1 (Faint oil sheen)", "slight", "Pass". */
export function readingText(a: Pick<AttrInfo, 'kind' | 'unit' | 'decimals' | 'scale'> | null, value: unknown): string {
  if (value === null || value === undefined || value === '') return 'nothing';
  if (typeof value === 'boolean') return value ? 'Pass' : 'Fail';
  if (typeof value === 'number') {
    if (a?.kind === 'graded') {
      const step = a.scale?.find((s) => s.grade === value);
      return step ? `${value} (${step.label})` : `grade ${value}`;
    }
    const n = formatDecimals(value, a?.kind === 'measured' ? a.decimals : null);
    return a?.unit ? `${n} ${a.unit}` : n;
  }
  if (typeof value === 'string') {
    if (value in COMPARED_LEVEL_LABELS) return COMPARED_LEVEL_LABELS[value as ComparedLevel];
    return a?.kind === 'note' ? q(cut(value, 160)) : cut(value, 160);
  }
  return 'a value';
}

export const VERDICT_WORDS: Readonly<Record<string, string>> = {
  pass: 'pass',
  fail: 'fail',
  no_criterion: 'no criterion',
  needs_baseline: 'cannot judge yet',
  not_done: 'not done',
};
export const verdictWord = (v: unknown) => (typeof v === 'string' ? (VERDICT_WORDS[v] ?? v.replace(/_/g, ' ')) : null);
/** "5.50 (pass)". */
export const judged = (a: AttrInfo | null, value: unknown, verdict: unknown) => {
  const w = verdictWord(verdict);
  return w ? `${readingText(a, value)} (${w})` : readingText(a, value);
};

/** Method details as the Record screen shows them: "Spindle RV-5 · Speed 10 rpm". */
export function methodText(a: AttrInfo | null, method: unknown): string {
  const m = rec(method);
  const parts: string[] = [];
  for (const [k, v] of Object.entries(m)) {
    if (v === '' || v == null || (typeof v !== 'string' && typeof v !== 'number')) continue;
    const f = a?.methodFields?.find((x) => x.key === k);
    const shown = typeof v === 'number' ? formatNumber(v) : v;
    if (f?.options) parts.push(String(shown));
    else parts.push(`${f?.label ?? words(k)} ${shown}${f?.unit ? ` ${f.unit}` : ''}`);
  }
  return parts.join(' · ');
}

/** A field name in words: 'setpointC' is "set point", an unknown camelCase key is split into words. */
export const FIELD_WORDS: Readonly<Record<string, string>> = {
  name: 'name',
  type: 'type',
  notes: 'notes',
  tradeName: 'trade name',
  inciName: 'INCI name',
  function: 'function',
  useMinPercent: 'lowest use level',
  useMaxPercent: 'highest use level',
  supplier: 'supplier',
  kind: 'kind',
  location: 'location',
  isControl: 'control condition',
  inUse: 'in-use test (opened daily)',
  preset: 'preset',
  setpointC: 'set point',
  rhPercent: 'relative humidity',
  toleranceC: 'temperature tolerance',
  toleranceRh: 'humidity tolerance',
  lowC: 'low temperature',
  highC: 'high temperature',
  hoursLow: 'hours at the low temperature',
  hoursHigh: 'hours at the high temperature',
  lightSource: 'light source',
  rpm: 'speed',
  minutes: 'spin time',
  radiusCm: 'rotor radius',
  active: 'in use',
  timeZone: 'time zone',
  reminderHour: 'reminder hour',
  remindersEnabled: 'reminder e-mails',
  title: 'title',
  startDate: 'start date',
  responsibleId: 'person responsible',
  samplesPerCell: 'samples per batch and condition',
  containerDescription: 'container',
  fillGrams: 'fill',
  productId: 'product',
  code: 'code',
  role: 'role',
  email: 'e-mail address',
};
export function words(key: string): string {
  return FIELD_WORDS[key] ?? key.replace(/([a-z0-9])([A-Z])/g, '$1 $2').replace(/_/g, ' ').toLowerCase();
}

export const KIND_WORDS: Readonly<Record<string, string>> = { constant: 'constant temperature', cycling: 'freeze-thaw cycle', light: 'light', mechanical: 'centrifuge' };
export const LIGHT_WORDS: Readonly<Record<string, string>> = { daylight: 'window daylight', uv_cabinet: 'UV cabinet' };
export const ATTRIBUTE_KIND_WORDS: Readonly<Record<string, string>> = {
  measured: 'measured',
  graded: 'graded on a scale',
  compared: 'compared with the control',
  pass_fail: 'pass or fail',
  note: 'a note',
};
export const roleWord = (r: unknown) => (typeof r === 'string' && r in ROLE_LABELS ? ROLE_LABELS[r as Role].toLowerCase() : String(r ?? 'none'));
export const statusWord = (s: unknown) => (typeof s === 'string' && s in STUDY_STATUS_LABELS ? STUDY_STATUS_LABELS[s as StudyStatus].toLowerCase() : String(s ?? 'none'));
export const outcomeWord = (o: unknown) => (typeof o === 'string' && o in DECISION_OUTCOME_LABELS ? DECISION_OUTCOME_LABELS[o as DecisionOutcome].toLowerCase() : String(o ?? 'none'));

/** A field's value as the screens show it (units, dates in the lab's format, names for ids). */
export function fieldValue(key: string, v: unknown, names: AuditNames, fmt: LabFormat): string {
  if (v === null || v === undefined || v === '') return 'none';
  const n = typeof v === 'number' ? formatNumber(v) : null;
  switch (key) {
    case 'setpointC':
    case 'lowC':
    case 'highC':
    case 'toleranceC':
      return n ? `${n} °C` : String(v);
    case 'rhPercent':
      return n ? `${n} % RH` : String(v);
    case 'toleranceRh':
    case 'useMinPercent':
    case 'useMaxPercent':
      return n ? `${n} %` : String(v);
    case 'hoursLow':
    case 'hoursHigh':
      return n ? `${n} h` : String(v);
    case 'rpm':
      return n ? `${n} rpm` : String(v);
    case 'minutes':
      return n ? `${n} min` : String(v);
    case 'radiusCm':
      return n ? `${n} cm` : String(v);
    case 'fillGrams':
    case 'sizeGrams':
      return n ? `${n} g` : String(v);
    case 'startDate':
    case 'madeOn':
    case 'endedOn':
    case 'dueDate':
      return dateText(v, fmt);
    case 'reminderHour':
      return typeof v === 'number' ? `${String(v).padStart(2, '0')}:00` : String(v);
    case 'type':
      return typeof v === 'string' && v in PRODUCT_TYPE_LABELS ? PRODUCT_TYPE_LABELS[v as ProductType].toLowerCase() : String(v);
    case 'kind':
      return typeof v === 'string' ? (KIND_WORDS[v] ?? ATTRIBUTE_KIND_WORDS[v] ?? v.replace(/_/g, ' ')) : String(v);
    case 'function':
      return typeof v === 'string' ? v.replace(/_/g, ' ') : String(v);
    case 'lightSource':
      return typeof v === 'string' ? (LIGHT_WORDS[v] ?? v.replace(/_/g, ' ')) : String(v);
    case 'role':
      return roleWord(v);
    case 'responsibleId': {
      const id = idOf(v);
      return (id && names.users.get(id)?.name) || 'a former member';
    }
    case 'productId': {
      const id = idOf(v);
      return q((id && names.products.get(id)) || 'a product');
    }
    case 'timeZone':
    case 'code':
    case 'email':
      return String(v);
  }
  if (typeof v === 'boolean') return v ? 'yes' : 'no';
  if (n) return n;
  if (typeof v === 'string') return /^\d{4}-\d{2}-\d{2}T/.test(v) ? instantText(v, fmt) : q(cut(v, 80));
  if (Array.isArray(v)) return plural(v.length, 'entry', 'entries');
  return 'new details';
}

/** "set point from 45 °C to 40 °C; location from “oven 2” to “oven 3”", for the keys that differ. */
export function changeList(oldV: unknown, newV: unknown, names: AuditNames, fmt: LabFormat, skip: readonly string[] = []): string {
  const o = rec(oldV);
  const n = rec(newV);
  const keys = [...new Set([...Object.keys(o), ...Object.keys(n)])].filter((k) => !skip.includes(k));
  const parts: string[] = [];
  for (const k of keys) {
    const a = o[k];
    const b = n[k];
    if (JSON.stringify(a ?? null) === JSON.stringify(b ?? null)) continue;
    if (!(k in o) || a == null || a === '') parts.push(`${words(k)} set to ${fieldValue(k, b, names, fmt)}`);
    else if (!(k in n)) parts.push(`${words(k)} was ${fieldValue(k, a, names, fmt)}`);
    else if (b == null || b === '') parts.push(`${words(k)} cleared (was ${fieldValue(k, a, names, fmt)})`);
    else parts.push(`${words(k)} from ${fieldValue(k, a, names, fmt)} to ${fieldValue(k, b, names, fmt)}`);
  }
  return parts.join('; ');
}

/** A storage condition's definition, as the Storage page writes it. */
export function conditionDefinition(c: Rec): string {
  const p = (x: unknown) => (typeof x === 'number' ? formatNumber(x) : '?');
  switch (c.kind) {
    case 'constant': {
      const t = `${p(c.setpointC)} °C ± ${p(c.toleranceC ?? 2)} °C`;
      return c.rhPercent == null ? t : `${t}, ${p(c.rhPercent)} % RH ± ${p(c.toleranceRh ?? 5)} %`;
    }
    case 'cycling':
      return `${p(c.lowC)} °C for ${p(c.hoursLow)} h ⇄ ${p(c.highC)} °C for ${p(c.hoursHigh)} h`;
    case 'light':
      return typeof c.lightSource === 'string' ? (LIGHT_WORDS[c.lightSource] ?? 'light') : 'light';
    case 'mechanical': {
      const rcf = typeof c.rpm === 'number' && typeof c.radiusCm === 'number' ? `, ≈ ${Math.round(relativeCentrifugalForce(c.rpm, c.radiusCm))} × g` : '';
      return `${p(c.rpm)} rpm, ${p(c.minutes)} min${rcf}`;
    }
  }
  return 'a storage condition';
}

export const DEMO_REASON = 'Demo data (invented)';
export const demoNote = (n: Rec) => (n.demo === true ? ' (invented demo data)' : '');
