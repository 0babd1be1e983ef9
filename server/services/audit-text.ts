/**
 * Audit rows as sentences a reviewer reads ("Signed the release decision for Hand cream B: released,
 * 24 months."): field names in words, values as the screens show them (units, decimals, compared
 * levels and grades in words, dates in the lab's format and time zone). Names are looked up in bulk
 * for a page of rows, one lab-scoped query per kind of record, never one per row.
 */
import { and, eq, inArray } from 'drizzle-orm';
import { auditActionLabel, auditEntityLabel } from '../../shared/audit-words';
import { COMPARED_LEVEL_LABELS, type AttributeKind, type ComparedLevel, type Criterion } from '../../shared/compute/criteria';
import { offsetLabel, type Offset } from '../../shared/compute/schedule';
import { relativeCentrifugalForce } from '../../shared/compute/storage';
import { criterionText, formatDecimals, formatNumber } from '../../shared/criterion-text';
import { CONDITION_ROLE_LABELS, DECISION_OUTCOME_LABELS, PRODUCT_TYPE_LABELS, STUDY_STATUS_LABELS, type AttributeScaleStep, type ConditionRole, type DecisionOutcome, type MethodField, type ProductType, type StudyStatus } from '../../shared/domain';
import { ROLE_LABELS, type Role } from '../../shared/roles';
import type { DbOrTx } from '../db/client';
import {
  attributes,
  batches,
  checkpoints,
  decisions,
  ingredients,
  observations,
  oosInvestigations,
  products,
  samples,
  storageConditions,
  studies,
  studyAttributes,
  studyConditions,
  users,
  variants,
} from '../db/schema';

/** The raw audit row, as stored. */
export interface AuditSource {
  action: string;
  entity: string;
  entityId: string | null;
  studyId: number | null;
  userId: number | null;
  oldValue: unknown;
  newValue: unknown;
  reason: string | null;
}

export interface LabFormat {
  timeZone: string;
  /** 'YYYY-MM-DD', 'DD/MM/YYYY', ... */
  dateFormat: string;
}

export interface AuditWords {
  actionLabel: string;
  sentence: string;
}

interface AttrInfo {
  name: string;
  kind: AttributeKind;
  unit: string | null;
  decimals: number;
  scale: AttributeScaleStep[] | null;
  methodFields: MethodField[] | null;
}

interface ReadingInfo {
  attr: AttrInfo;
  sample: string;
  checkpoint: string;
  studyId: number;
}

/** Names of what a page of rows mentions, each map keyed by id. */
export interface AuditNames {
  studies: Map<number, { title: string; product: string }>;
  observations: Map<number, ReadingInfo>;
  investigations: Map<number, ReadingInfo>;
  decisions: Map<number, { variant: string; product: string }>;
  checkpoints: Map<number, { label: string; condition: string | null; studyId: number }>;
  users: Map<number, { name: string; email: string }>;
  conditions: Map<number, string>;
  attributes: Map<number, AttrInfo>;
  products: Map<number, string>;
  variants: Map<number, { code: string; product: string }>;
  batches: Map<number, { lot: string; variant: string; product: string }>;
  ingredients: Map<number, string>;
}

type Rec = Record<string, unknown>;
const rec = (v: unknown): Rec => (v && typeof v === 'object' && !Array.isArray(v) ? (v as Rec) : {});
const idOf = (v: unknown): number | null => {
  const n = typeof v === 'number' ? v : typeof v === 'string' && /^\d+$/.test(v) ? Number(v) : NaN;
  return Number.isSafeInteger(n) && n > 0 ? n : null;
};
const arr = (v: unknown): unknown[] => (Array.isArray(v) ? v : []);
const str = (v: unknown): string | null => (typeof v === 'string' && v.trim() !== '' ? v : v == null ? null : typeof v === 'number' ? String(v) : null);

// ---------------------------------------------------------------- looking names up

/** The ids each row mentions, by kind of record. */
function wantedIds(rows: readonly AuditSource[]) {
  const want = {
    studies: new Set<number>(),
    observations: new Set<number>(),
    investigations: new Set<number>(),
    decisions: new Set<number>(),
    checkpoints: new Set<number>(),
    users: new Set<number>(),
    conditions: new Set<number>(),
    attributes: new Set<number>(),
    products: new Set<number>(),
    variants: new Set<number>(),
    batches: new Set<number>(),
    ingredients: new Set<number>(),
  };
  const add = (set: Set<number>, v: unknown) => {
    const id = idOf(v);
    if (id) set.add(id);
  };
  for (const r of rows) {
    const o = rec(r.oldValue);
    const n = rec(r.newValue);
    add(want.studies, r.studyId);
    switch (r.entity) {
      case 'study':
        add(want.studies, r.entityId);
        for (const p of [o, n]) {
          add(want.products, p.productId);
          add(want.users, p.responsibleId);
          for (const b of arr(p.batchIds)) add(want.batches, b);
          for (const c of arr(p.conditions)) add(want.conditions, rec(c).conditionId);
          for (const a of arr(p.attributes)) add(want.attributes, rec(a).attributeId);
          for (const q of arr(p.proposals)) add(want.variants, rec(q).variantId);
        }
        break;
      case 'observation':
        add(want.observations, r.entityId);
        break;
      case 'oos_investigation':
        add(want.investigations, r.entityId);
        break;
      case 'decision':
        add(want.decisions, r.entityId);
        break;
      case 'checkpoint':
        add(want.checkpoints, r.entityId);
        break;
      case 'user':
        add(want.users, r.entityId);
        break;
      case 'storage_condition':
        add(want.conditions, r.entityId);
        break;
      case 'chamber_log':
        add(want.conditions, n.conditionId);
        break;
      case 'attribute':
        add(want.attributes, r.entityId);
        break;
      case 'product':
        add(want.products, r.entityId);
        break;
      case 'variant':
        add(want.variants, r.entityId);
        add(want.variants, n.derivedFromId);
        add(want.products, n.productId);
        for (const p of [o, n]) for (const l of arr(p.lines)) add(want.ingredients, rec(l).ingredientId);
        break;
      case 'batch':
        add(want.batches, r.entityId);
        add(want.variants, n.variantId);
        break;
      case 'ingredient':
        add(want.ingredients, r.entityId);
        break;
    }
  }
  return want;
}

const attrColumns = {
  name: attributes.name,
  kind: attributes.kind,
  unit: attributes.unit,
  decimals: attributes.decimals,
  scale: attributes.scale,
  methodFields: attributes.methodFields,
};
const attrOf = (a: { name: string; kind: AttributeKind; unit: string | null; decimals: number; scale: unknown; methodFields: unknown }): AttrInfo => ({
  name: a.name,
  kind: a.kind,
  unit: a.unit,
  decimals: a.decimals,
  scale: Array.isArray(a.scale) ? (a.scale as AttributeScaleStep[]) : null,
  methodFields: Array.isArray(a.methodFields) ? (a.methodFields as MethodField[]) : null,
});

/** Every name a page of rows mentions: one query per kind of record, each filtered on the lab. */
export async function lookUpNames(db: DbOrTx, labId: number, rows: readonly AuditSource[]): Promise<AuditNames> {
  const want = wantedIds(rows);
  const ids = (s: Set<number>) => [...s];
  const when = async <T>(s: Set<number>, q: (list: number[]) => Promise<T[]>): Promise<T[]> => (s.size ? q(ids(s)) : []);
  const [st, obs, inv, dec, cps, us, conds, attrs, prods, vars, bats, ings] = await Promise.all([
    when(want.studies, (list) =>
      db
        .select({ id: studies.id, title: studies.title, product: products.name })
        .from(studies)
        .innerJoin(products, eq(products.id, studies.productId))
        .where(and(eq(studies.labId, labId), inArray(studies.id, list))),
    ),
    when(want.observations, (list) =>
      db
        .select({ id: observations.id, studyId: observations.studyId, sample: samples.code, checkpoint: checkpoints.label, ...attrColumns })
        .from(observations)
        .innerJoin(samples, eq(samples.id, observations.sampleId))
        .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
        .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
        .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
        .where(and(eq(observations.labId, labId), inArray(observations.id, list))),
    ),
    when(want.investigations, (list) =>
      db
        .select({ id: oosInvestigations.id, studyId: oosInvestigations.studyId, sample: samples.code, checkpoint: checkpoints.label, ...attrColumns })
        .from(oosInvestigations)
        .innerJoin(samples, eq(samples.id, oosInvestigations.sampleId))
        .innerJoin(checkpoints, eq(checkpoints.id, oosInvestigations.checkpointId))
        .innerJoin(studyAttributes, eq(studyAttributes.id, oosInvestigations.studyAttributeId))
        .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
        .where(and(eq(oosInvestigations.labId, labId), inArray(oosInvestigations.id, list))),
    ),
    when(want.decisions, (list) =>
      db
        .select({ id: decisions.id, variant: variants.code, product: products.name })
        .from(decisions)
        .innerJoin(variants, eq(variants.id, decisions.variantId))
        .innerJoin(products, eq(products.id, variants.productId))
        .where(and(eq(decisions.labId, labId), inArray(decisions.id, list))),
    ),
    when(want.checkpoints, (list) =>
      db
        .select({ id: checkpoints.id, label: checkpoints.label, studyId: checkpoints.studyId, condition: storageConditions.name })
        .from(checkpoints)
        .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
        .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
        .where(and(eq(checkpoints.labId, labId), inArray(checkpoints.id, list))),
    ),
    when(want.users, (list) =>
      db
        .select({ id: users.id, name: users.name, email: users.email })
        .from(users)
        .where(and(eq(users.labId, labId), inArray(users.id, list))),
    ),
    when(want.conditions, (list) =>
      db
        .select({ id: storageConditions.id, name: storageConditions.name })
        .from(storageConditions)
        .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, list))),
    ),
    when(want.attributes, (list) =>
      db
        .select({ id: attributes.id, ...attrColumns })
        .from(attributes)
        .where(and(eq(attributes.labId, labId), inArray(attributes.id, list))),
    ),
    when(want.products, (list) =>
      db
        .select({ id: products.id, name: products.name })
        .from(products)
        .where(and(eq(products.labId, labId), inArray(products.id, list))),
    ),
    when(want.variants, (list) =>
      db
        .select({ id: variants.id, code: variants.code, product: products.name })
        .from(variants)
        .innerJoin(products, eq(products.id, variants.productId))
        .where(and(eq(variants.labId, labId), inArray(variants.id, list))),
    ),
    when(want.batches, (list) =>
      db
        .select({ id: batches.id, lot: batches.lotCode, variant: variants.code, product: products.name })
        .from(batches)
        .innerJoin(variants, eq(variants.id, batches.variantId))
        .innerJoin(products, eq(products.id, variants.productId))
        .where(and(eq(batches.labId, labId), inArray(batches.id, list))),
    ),
    when(want.ingredients, (list) =>
      db
        .select({ id: ingredients.id, name: ingredients.tradeName })
        .from(ingredients)
        .where(and(eq(ingredients.labId, labId), inArray(ingredients.id, list))),
    ),
  ]);
  return {
    studies: new Map(st.map((r) => [r.id, { title: r.title, product: r.product }])),
    observations: new Map(obs.map((r) => [r.id, { attr: attrOf(r), sample: r.sample, checkpoint: r.checkpoint, studyId: r.studyId }])),
    investigations: new Map(inv.map((r) => [r.id, { attr: attrOf(r), sample: r.sample, checkpoint: r.checkpoint, studyId: r.studyId }])),
    decisions: new Map(dec.map((r) => [r.id, { variant: r.variant, product: r.product }])),
    checkpoints: new Map(cps.map((r) => [r.id, { label: r.label, condition: r.condition, studyId: r.studyId }])),
    users: new Map(us.map((r) => [r.id, { name: r.name, email: r.email }])),
    conditions: new Map(conds.map((r) => [r.id, r.name])),
    attributes: new Map(attrs.map((r) => [r.id, attrOf(r)])),
    products: new Map(prods.map((r) => [r.id, r.name])),
    variants: new Map(vars.map((r) => [r.id, { code: r.code, product: r.product }])),
    batches: new Map(bats.map((r) => [r.id, { lot: r.lot, variant: r.variant, product: r.product }])),
    ingredients: new Map(ings.map((r) => [r.id, r.name])),
  };
}

/** Sentences for a page of rows, in order; names looked up once for the page. */
export async function describeAuditRows(db: DbOrTx, labId: number, lab: LabFormat, rows: readonly AuditSource[]): Promise<AuditWords[]> {
  if (!rows.length) return [];
  const names = await lookUpNames(db, labId, rows);
  return rows.map((r) => ({ actionLabel: auditActionLabel(r.action), sentence: auditSentence(r, names, lab) }));
}

// ---------------------------------------------------------------- words for values

const q = (s: string) => `“${s}”`;
const cut = (s: string, max = 120) => (s.length > max ? `${s.slice(0, max - 1)}…` : s);
const plural = (n: number, one: string, many = `${one}s`) => `${formatNumber(n)} ${n === 1 ? one : many}`;
const lowerFirst = (s: string) => (/^[A-Z][a-z]/.test(s) ? s.charAt(0).toLowerCase() + s.slice(1) : s);

/** Ends a sentence with one full stop. */
function end(s: string): string {
  const t = s.trim();
  return /[.!?…]["”)]?$/.test(t) ? t : `${t}.`;
}

/** "… Reason: it was wrong." */
function withNote(s: string, note: string | null | undefined, label = 'Reason'): string {
  const n = note?.trim();
  return n ? `${end(s)} ${label}: ${end(cut(n, 500))}` : end(s);
}

function dateText(date: unknown, fmt: LabFormat): string {
  const m = typeof date === 'string' ? /^(\d{4})-(\d{2})-(\d{2})$/.exec(date) : null;
  if (!m) return typeof date === 'string' ? date : '';
  return (fmt.dateFormat || 'YYYY-MM-DD').replace('YYYY', m[1]).replace('MM', m[2]).replace('DD', m[3]);
}

/** A UTC instant as date and time in the lab's zone and date format, as the screens show times. */
function instantText(value: unknown, fmt: LabFormat): string {
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

const VERDICT_WORDS: Readonly<Record<string, string>> = {
  pass: 'pass',
  fail: 'fail',
  no_criterion: 'no criterion',
  needs_baseline: 'cannot judge yet',
  not_done: 'not done',
};
const verdictWord = (v: unknown) => (typeof v === 'string' ? (VERDICT_WORDS[v] ?? v.replace(/_/g, ' ')) : null);
/** "5.50 (pass)". */
const judged = (a: AttrInfo | null, value: unknown, verdict: unknown) => {
  const w = verdictWord(verdict);
  return w ? `${readingText(a, value)} (${w})` : readingText(a, value);
};

/** Method details as the Record screen shows them: "Spindle RV-5 · Speed 10 rpm". */
function methodText(a: AttrInfo | null, method: unknown): string {
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
const FIELD_WORDS: Readonly<Record<string, string>> = {
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
function words(key: string): string {
  return FIELD_WORDS[key] ?? key.replace(/([a-z0-9])([A-Z])/g, '$1 $2').replace(/_/g, ' ').toLowerCase();
}

const KIND_WORDS: Readonly<Record<string, string>> = { constant: 'constant temperature', cycling: 'freeze-thaw cycle', light: 'light', mechanical: 'centrifuge' };
const LIGHT_WORDS: Readonly<Record<string, string>> = { daylight: 'window daylight', uv_cabinet: 'UV cabinet' };
const ATTRIBUTE_KIND_WORDS: Readonly<Record<string, string>> = {
  measured: 'measured',
  graded: 'graded on a scale',
  compared: 'compared with the control',
  pass_fail: 'pass or fail',
  note: 'a note',
};
const roleWord = (r: unknown) => (typeof r === 'string' && r in ROLE_LABELS ? ROLE_LABELS[r as Role].toLowerCase() : String(r ?? 'none'));
const statusWord = (s: unknown) => (typeof s === 'string' && s in STUDY_STATUS_LABELS ? STUDY_STATUS_LABELS[s as StudyStatus].toLowerCase() : String(s ?? 'none'));
const outcomeWord = (o: unknown) => (typeof o === 'string' && o in DECISION_OUTCOME_LABELS ? DECISION_OUTCOME_LABELS[o as DecisionOutcome].toLowerCase() : String(o ?? 'none'));

/** A field's value as the screens show it (units, dates in the lab's format, names for ids). */
function fieldValue(key: string, v: unknown, names: AuditNames, fmt: LabFormat): string {
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
function changeList(oldV: unknown, newV: unknown, names: AuditNames, fmt: LabFormat, skip: readonly string[] = []): string {
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
function conditionDefinition(c: Rec): string {
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

const DEMO_REASON = 'Demo data (invented)';
const demoNote = (n: Rec) => (n.demo === true ? ' (invented demo data)' : '');

// ---------------------------------------------------------------- one sentence per row

/** One row as a sentence; any row the app writes reads in words, an unknown kind falls back to its changes in words. */
export function auditSentence(r: AuditSource, names: AuditNames, fmt: LabFormat): string {
  const o = rec(r.oldValue);
  const n = rec(r.newValue);
  const id = idOf(r.entityId);
  const studyId = r.studyId ?? (r.entity === 'study' ? id : null);
  const study = studyId ? names.studies.get(studyId) : undefined;
  const studyName = study ? q(study.title) : 'the study';
  const inStudy = study ? ` in ${q(study.title)}` : '';
  const reason = r.reason === DEMO_REASON ? null : r.reason;

  /** A reading's place: "pH for sample K7M2QX at Week 1 in “Title”". */
  const reading = (info: ReadingInfo | undefined) => {
    const attr = info?.attr ?? null;
    const attrName = attr?.name ?? str(n.attribute) ?? 'a result';
    const sample = info?.sample ?? str(n.sample) ?? '?';
    const cp = info?.checkpoint ?? str(n.checkpoint) ?? '?';
    return { attr, what: `${attrName} for sample ${sample} at ${cp === 'Initial' ? 'the initial test' : cp}${inStudy}` };
  };

  switch (`${r.action}:${r.entity}`) {
    // -------------------------------------------------------------- readings
    case 'create:observation': {
      const { attr, what } = reading(id ? names.observations.get(id) : undefined);
      if (n.verdict === 'not_done') return withNote(`Recorded ${what} as not done`, str(n.notDoneReason), 'Why');
      const method = methodText(attr, n.method);
      return end(`Recorded ${what}: ${judged(attr, n.value, n.verdict)}${method ? `, method ${method}` : ''}`);
    }
    case 'update:observation': {
      const { attr, what } = reading(id ? names.observations.get(id) : undefined);
      const change = `from ${judged(attr, o.value, o.verdict)} to ${judged(attr, n.value, n.verdict)}`;
      if (n.retestOfInvestigation != null) return withNote(`Replaced the result of ${what} with the valid re-test, ${change}`, reason);
      return withNote(`Corrected ${what} ${change}`, reason);
    }
    case 'void:observation': {
      const { attr, what } = reading(id ? names.observations.get(id) : undefined);
      return withNote(`Voided the reading of ${what}: ${judged(attr, o.value, o.verdict)}`, reason);
    }
    case 'create:photo':
      return end(
        `Added a photo of sample ${str(n.sample) ?? '?'} at ${str(n.checkpoint) ?? '?'}${inStudy}${str(n.file) ? `: ${q(cut(String(n.file), 80))}` : ''}${typeof n.bytes === 'number' ? ` (${bytesText(n.bytes)})` : ''}`,
      );
    case 'update:checkpoint': {
      const cp = id ? names.checkpoints.get(id) : undefined;
      const where = cp ? `${cp.label}${cp.condition ? ` at ${cp.condition}` : ''}` : 'a checkpoint';
      if (n.status === 'missed') return withNote(`Marked ${where}${inStudy} as missed`, reason);
      return withNote(`Changed ${where}${inStudy}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }

    // -------------------------------------------------------------- out-of-specification investigations
    case 'create:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      const msg = str(n.message);
      // The evaluation's own message follows as a sentence: "pH 4.8 is 0.7 from day-0 5.5; allowed ±0.5."
      const opened = end(`Opened an out-of-specification investigation of ${what}: ${readingText(attr, n.value)}`);
      return msg ? `${opened} ${end(cut(msg, 200))}` : opened;
    }
    case 'remeasure:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      const method = methodText(attr, n.method);
      const note = reason === 'Re-measured at the bench after an out-of-specification result' ? null : reason;
      return withNote(`Re-measured ${what} at the bench: first ${judged(attr, o.value, o.verdict)}, again ${judged(attr, n.remeasured, n.verdict)}${method ? `, method ${method}` : ''}`, note, 'Comment');
    }
    case 'confirm:oos_investigation': {
      const { what } = reading(id ? names.investigations.get(id) : undefined);
      return withNote(`Confirmed at the bench the out-of-specification result of ${what}`, reason, 'Comment');
    }
    case 'close:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      const retest = rec(n.retest);
      const outcome =
        n.conclusion === 'invalidated'
          ? `invalidated as a lab error; the re-test ${judged(attr, retest.value, retest.verdict)} is used`
          : 'confirmed as a real result';
      return withNote(`Closed the out-of-specification investigation of ${what}: ${outcome}`, reason);
    }
    case 'import:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      return withNote(`Imported an out-of-specification investigation of ${what}: ${readingText(attr, n.value)}, ${n.open === true ? 'open' : 'closed'}${demoNote(n)}`, reason);
    }

    // -------------------------------------------------------------- studies
    case 'create:study':
      return end(
        `Created the study plan ${q(str(n.title) ?? study?.title ?? '?')} for ${fieldValue('productId', n.productId, names, fmt)}: ${plural(arr(n.batchIds).length, 'batch', 'batches')}, ${plural(arr(n.conditions).length, 'storage condition')}, ${plural(arr(n.attributes).length, 'attribute')}, starting ${dateText(n.startDate, fmt)}`,
      );
    case 'update:study': {
      if (n.reviewReopened === true) {
        if (o.status === 'decided') return withNote(`Reopened the review of ${studyName}, which was decided`, reason);
        return withNote(`Changed a reading of ${studyName} while it was ${statusWord(o.status)}`, reason);
      }
      if (o.status === 'draft' && n.status === 'running') {
        const init = rec(n.initialTest);
        const retained = typeof init.retainedSamples === 'number' && init.retainedSamples > 0 ? `, ${plural(init.retainedSamples, 'retained sample')} for the initial test` : '';
        const samples = typeof n.samples === 'number' ? `: ${plural(n.samples, 'sample')}, ${plural(Number(n.checkpoints ?? 0), 'checkpoint')}${retained}` : '';
        return withNote(`Started the study ${studyName}${samples}`, reason === 'Study started' ? null : reason);
      }
      if ('title' in n && 'batchIds' in n) return withNote(`Changed the draft plan of ${studyName}: ${planChanges(o, n, names, fmt) || 'saved without changes'}`, reason);
      return withNote(`Changed the study ${studyName}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }
    case 'submit:study': {
      const proposals = arr(n.proposals).map((p) => {
        const x = rec(p);
        const vid = idOf(x.variantId);
        const code = (vid && names.variants.get(vid)?.code) || '?';
        const months = typeof x.shelfLifeMonths === 'number' ? plural(x.shelfLifeMonths, 'month') : 'no shelf life';
        const pao = typeof x.paoMonths === 'number' ? `, ${plural(x.paoMonths, 'month')} after opening` : '';
        return `${code}: ${months}${pao}`;
      });
      const open = typeof n.openCheckpoints === 'number' && n.openCheckpoints > 0 ? ` with ${plural(n.openCheckpoints, 'checkpoint')} still open` : '';
      return withNote(`Submitted ${studyName} for review${open}, proposing ${proposals.length ? proposals.join('; ') : 'no shelf life'}`, reason, open ? 'Why it ends early' : 'Reason');
    }
    case 'sign_failed:study':
      return end(`Signature refused on ${studyName}: ${lowerFirst(reason ?? 'wrong password')}`);
    case 'amend:study':
      return withNote(amendText(n, studyName, fmt), reason);
    case 'migrate:study': {
      const moved = arr(n.moved).map(rec);
      const readings = moved.reduce((s, m) => s + (typeof m.readings === 'number' ? m.readings : 0), 0);
      const extra = arr(n.extraReadings).map(rec).reduce((s, m) => s + (typeof m.readings === 'number' ? m.readings : 0), 0);
      const cancelled = arr(n.emptyDayZeroCancelled).length;
      const paired = typeof n.pullsPaired === 'number' ? n.pullsPaired : 0;
      const parts = [
        readings ? `${plural(readings, 'day-0 reading')} of ${plural(moved.length, 'batch', 'batches')} became initial readings` : null,
        extra ? `${plural(extra, 'reading')} kept as extra day-0 readings` : null,
        cancelled ? `${plural(cancelled, 'empty day-0 checkpoint')} cancelled` : null,
        paired ? `${plural(paired, 'pull')} paired with a same-day control reading` : null,
      ].filter(Boolean);
      return end(`Migrated ${studyName} to one initial test per batch: ${parts.length ? parts.join(', ') : 'it had no day-0 readings to move'}; no reading was deleted or changed in value`);
    }
    case 'import:study':
      return withNote(`Imported the study ${q(str(n.title) ?? study?.title ?? '?')}${demoNote(n)}`, reason);

    // -------------------------------------------------------------- decisions
    case 'sign:decision': {
      const d = id ? names.decisions.get(id) : undefined;
      const product = d?.product ?? study?.product ?? '';
      const variant = d?.variant ?? str(n.variant) ?? '?';
      const months = typeof n.shelfLifeMonths === 'number' ? `, ${plural(n.shelfLifeMonths, 'month')}` : '';
      const pao = typeof n.paoMonths === 'number' ? `, ${plural(n.paoMonths, 'month')} after opening` : '';
      const replaces = o.outcome ? `, replacing the earlier one (${outcomeWord(o.outcome)})` : '';
      return withNote(`Signed ${o.outcome ? 'a new' : 'the'} release decision for ${`${product} ${variant}`.trim()}${replaces}: ${outcomeWord(n.outcome)}${months}${pao}`, reason, o.outcome ? 'Reason' : 'Comment');
    }

    // -------------------------------------------------------------- storage
    case 'create:storage_condition':
      return withNote(
        `Created the storage condition ${q(str(n.name) ?? '?')}: ${KIND_WORDS[String(n.kind)] ?? 'condition'}, ${conditionDefinition(n)}${str(n.location) ? `, ${cut(String(n.location), 80)}` : ''}${n.isControl === true ? ', used as a control' : ''}${demoNote(n)}`,
        reason,
      );
    case 'update:storage_condition': {
      const name = q((id && names.conditions.get(id)) || str(o.name) || '?');
      const keys = Object.keys(n);
      if (keys.length === 1 && keys[0] === 'active') {
        return withNote(n.active ? `Brought the storage condition ${name} back into use` : `Retired the storage condition ${name}`, reason);
      }
      return withNote(`Changed the storage condition ${name}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }
    case 'import:chamber_log': {
      const cid = idOf(n.conditionId);
      const cond = q((cid && names.conditions.get(cid)) || 'a condition');
      const count = typeof n.readingCount === 'number' ? plural(n.readingCount, 'reading') : 'readings';
      const span = str(n.first) && str(n.last) ? ` from ${instantText(n.first, fmt)} to ${instantText(n.last, fmt)}` : '';
      const mkt = typeof n.mktC === 'number' ? `; mean kinetic temperature ${n.mktC.toFixed(1)} °C` : '';
      const tol =
        'hoursOutOfTolerance' in n
          ? typeof n.hoursOutOfTolerance === 'number'
            ? n.hoursOutOfTolerance === 0
              ? '; in tolerance throughout'
              : `; ${n.hoursOutOfTolerance.toFixed(n.hoursOutOfTolerance < 10 ? 2 : 1)} h out of tolerance`
            : '; tolerance not judged'
          : '';
      const file = str(n.fileName) ? ` ${q(cut(String(n.fileName), 80))}` : '';
      const unit = n.unit === 'F' ? ' (converted from °F)' : '';
      return withNote(`Imported the chamber log${file} for ${cond}: ${count}${span}${unit}${mkt}${tol}${demoNote(n)}`, reason);
    }

    // -------------------------------------------------------------- attributes
    case 'create:attribute': {
      const unit = str(n.unit);
      const crit = n.defaultCriterion ? criterionText(n.defaultCriterion as Criterion, { unit, scale: Array.isArray(n.scale) ? (n.scale as AttributeScaleStep[]) : null }) : 'No criterion';
      const decimals = n.kind === 'measured' && typeof n.decimals === 'number' ? `, ${plural(n.decimals, 'decimal')}` : '';
      return withNote(`Created the attribute ${q(str(n.name) ?? '?')} (${ATTRIBUTE_KIND_WORDS[String(n.kind)] ?? 'attribute'}${unit ? `, in ${unit}` : ''}${decimals}), default criterion: ${lowerFirst(crit)}`, reason);
    }
    case 'update:attribute': {
      const name = q((id && names.attributes.get(id)?.name) || '?');
      if (Object.keys(n).length === 1 && 'active' in n) return withNote(n.active ? `Made the attribute ${name} available again` : `Retired the attribute ${name}`, reason);
      return withNote(`Changed the attribute ${name}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }

    // -------------------------------------------------------------- formulas
    case 'create:product':
      return withNote(`Created the product ${q(str(n.name) ?? '?')} (${fieldValue('type', n.type, names, fmt)})`, reason);
    case 'update:product':
      return withNote(`Changed the product ${q((id && names.products.get(id)) || str(o.name) || '?')}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    case 'create:ingredient':
      return withNote(`Added the ingredient ${q(str(n.tradeName) ?? '?')} (${str(n.inciName) ?? '?'}, ${fieldValue('function', n.function, names, fmt)}) to the library`, reason);
    case 'update:ingredient':
      return withNote(`Changed the ingredient ${q((id && names.ingredients.get(id)) || str(o.tradeName) || '?')}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    case 'create:variant': {
      const pid = idOf(n.productId);
      const product = q((pid && names.products.get(pid)) || (id && names.variants.get(id)?.product) || '?');
      const lines = arr(n.lines).map(rec);
      const total = lines.reduce((s, l) => s + (typeof l.percent === 'number' ? l.percent : 0), 0);
      const linesText = lines.length ? `${plural(lines.length, 'formula line')} totalling ${formatNumber(total)} %` : 'no formula lines yet';
      const from = idOf(n.derivedFromId);
      if (from) return withNote(`Created variant ${str(n.code) ?? '?'} of ${product} as a copy of variant ${names.variants.get(from)?.code ?? '?'}: ${q(str(n.name) ?? '?')}, ${linesText}`, reason);
      return withNote(`Created variant ${str(n.code) ?? '?'} of ${product}: ${q(str(n.name) ?? '?')}, ${linesText}`, reason);
    }
    case 'update:variant': {
      const v = id ? names.variants.get(id) : undefined;
      const header = changeList(o, n, names, fmt, ['lines']);
      const lines = lineChanges(o.lines, n.lines, names);
      const parts = [header, lines].filter(Boolean).join('; ');
      return withNote(`Changed variant ${str(o.code) ?? v?.code ?? '?'} of ${q(v?.product ?? '?')}: ${parts || 'no visible change'}`, reason);
    }
    case 'create:batch': {
      const vid = idOf(n.variantId);
      const v = vid ? names.variants.get(vid) : undefined;
      const fill = typeof n.fillAmount === 'number' ? `, filled to ${formatNumber(n.fillAmount)} ${str(n.fillUnit) ?? 'g'}` : '';
      return withNote(
        `Recorded batch ${str(n.lotCode) ?? '?'} of ${v ? `${v.product} ${v.code}` : 'a variant'}, made ${dateText(n.madeOn, fmt)}: ${typeof n.sizeGrams === 'number' ? `${formatNumber(n.sizeGrams)} g` : '?'}, ${cut(str(n.packaging) ?? '?', 80)}${fill}`,
        reason,
      );
    }
    case 'import:batch': {
      const b = id ? names.batches.get(id) : undefined;
      return withNote(`Imported batch ${b ? `${b.lot} of ${b.product} ${b.variant}` : '?'}${demoNote(n)}${str(n.note) ? `: ${str(n.note)}` : ''}`, reason);
    }
    case 'import:formulas': {
      const count = (k: string, one: string, many?: string) => (typeof n[k] === 'number' ? plural(n[k] as number, one, many) : null);
      const parts = [count('ingredients', 'ingredient'), count('products', 'product'), count('variants', 'variant'), count('batches', 'batch', 'batches')].filter(Boolean);
      return withNote(`Imported the formula catalogue${parts.length ? `: ${parts.join(', ')}` : ''}${demoNote(n)}`, reason);
    }

    // -------------------------------------------------------------- the lab and its members
    case 'create:lab':
      return withNote(`Created the lab ${q(str(n.name) ?? '?')}${demoNote(n)}`, reason);
    case 'update:lab':
      return withNote(`Changed the lab settings: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    case 'create:invitation':
      return withNote(`Invited ${str(n.email) ?? '?'} to join as ${roleWord(n.role)}${str(n.expiresAt) ? `; the link works until ${instantText(n.expiresAt, fmt)}` : ''}`, reason);
    case 'void:invitation':
      return withNote(`Withdrew the invitation to ${str(o.email) ?? '?'}`, reason);
    case 'create:user':
      return withNote(
        `Joined the lab as ${roleWord(n.role)}${n.invitationId != null ? ' by accepting an invitation' : ''}: ${str(n.name) ?? '?'} (${str(n.email) ?? '?'})`,
        reason === 'Accepted an invitation' ? null : reason,
      );
    case 'update:user': {
      const u = id ? names.users.get(id) : undefined;
      const who = u?.name ?? 'a former member';
      const self = id != null && id === r.userId;
      if (n.password === 'changed') {
        if (reason === 'Password reset by e-mail link') return end('Set a new password with an e-mail reset link');
        const ended = typeof n.otherSessionsEnded === 'number' && n.otherSessionsEnded > 0 ? `; ${plural(n.otherSessionsEnded, 'other session')} signed out` : '';
        return withNote(`Changed ${self ? 'their own password' : `the password of ${who}`}${ended}`, reason === 'Password changed by the member while signed in' ? null : reason);
      }
      if ('role' in n) return withNote(`Changed the role of ${who} from ${roleWord(o.role)} to ${roleWord(n.role)}`, reason);
      if ('active' in n) {
        if (n.active === false) {
          const ended = typeof n.sessionsEnded === 'number' && n.sessionsEnded > 0 ? `; ${plural(n.sessionsEnded, 'open session')} ended` : '';
          return withNote(`Disabled the account of ${who}${ended}`, reason);
        }
        return withNote(`Enabled the account of ${who} again`, reason);
      }
      if ('remindersEnabled' in n) return withNote(`Turned reminder e-mails ${n.remindersEnabled ? 'on' : 'off'} for ${self ? 'themselves' : who}`, reason);
      return withNote(`Changed the member ${who}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }
    case 'lockout:user': {
      const u = id ? names.users.get(id) : undefined;
      const minutes = typeof n.minutes === 'number' ? ` for ${plural(n.minutes, 'minute')}` : '';
      const why = reason ? (/^\d/.test(reason) ? ` after ${reason}` : `: ${lowerFirst(reason)}`) : '';
      const ip = str(n.ip) ? `; the last attempt came from ${n.ip}` : '';
      return end(`Locked out ${u?.name ?? 'a member'}${minutes}${why}${ip}`);
    }
  }
  return fallback(r, names, fmt, reason);
}

/** A row of a kind this file does not know yet: its action, what it touched, and its changes in words. */
function fallback(r: AuditSource, names: AuditNames, fmt: LabFormat, reason: string | null): string {
  const what = `${auditActionLabel(r.action)} ${r.entity === 'lab' ? 'the ' : 'a '}${auditEntityLabel(r.entity)}`;
  const changes = changeList(r.oldValue, r.newValue, names, fmt);
  return withNote(`${what}${changes ? `: ${changes}` : ''}`, reason);
}

function bytesText(b: number): string {
  if (b < 1024) return `${b} bytes`;
  if (b < 1024 * 1024) return `${Math.round(b / 1024)} KB`;
  return `${(b / 1024 / 1024).toFixed(1)} MB`;
}

/** What an amendment did, in words. */
function amendText(n: Rec, studyName: string, fmt: LabFormat): string {
  const cancelled = typeof n.cancelledCheckpoints === 'number' ? plural(n.cancelledCheckpoints, 'open checkpoint') : null;
  switch (n.kind) {
    case 'add_checkpoint': {
      const control = str(n.controlReading) ? `, paired with the control reading ${n.controlReading}${n.controlAdded === true ? ' (added)' : ''}` : '';
      return `Amended ${studyName}: added ${str(n.checkpoint) ?? 'a checkpoint'} at ${str(n.condition) ?? '?'}, due ${dateText(n.dueDate, fmt)}${control}`;
    }
    case 'end_condition':
      return `Amended ${studyName}: ended ${str(n.condition) ?? 'a condition'} on ${dateText(n.endedOn, fmt)}${cancelled ? `; ${cancelled} cancelled` : ''}`;
    case 'pair_control':
      return `Amended ${studyName}: ${str(n.checkpoint) ?? 'a pull'} is now judged against the control reading ${str(n.controlReading) ?? '?'}${str(n.controlDate) ? ` of ${dateText(n.controlDate, fmt)}` : ''}`;
    case 'cancel':
      return `Cancelled the study ${studyName}${cancelled ? `; ${cancelled} cancelled` : ''}`;
    default:
      return `Amended ${studyName}`;
  }
}

/** A draft plan's changes: title, dates and fields in words; batches, conditions and attributes by name. */
function planChanges(o: Rec, n: Rec, names: AuditNames, fmt: LabFormat): string {
  const parts: string[] = [];
  const scalar = changeList(o, n, names, fmt, ['batchIds', 'conditions', 'attributes']);
  if (scalar) parts.push(scalar);
  const setDiff = (label: string, a: number[], b: number[], name: (id: number) => string) => {
    const added = b.filter((x) => !a.includes(x)).map(name);
    const removed = a.filter((x) => !b.includes(x)).map(name);
    if (added.length) parts.push(`${label} added: ${added.join(', ')}`);
    if (removed.length) parts.push(`${label} removed: ${removed.join(', ')}`);
  };
  const ids = (v: unknown, key?: string) => arr(v).map((x) => idOf(key ? rec(x)[key] : x)).filter((x): x is number => x != null);
  const batch = (bid: number) => names.batches.get(bid)?.lot ?? 'a batch';
  const cond = (cid: number) => q(names.conditions.get(cid) ?? 'a condition');
  const attr = (aid: number) => names.attributes.get(aid)?.name ?? 'an attribute';
  setDiff('batches', ids(o.batchIds), ids(n.batchIds), batch);
  setDiff('storage conditions', ids(o.conditions, 'conditionId'), ids(n.conditions, 'conditionId'), cond);
  setDiff('attributes', ids(o.attributes, 'attributeId'), ids(n.attributes, 'attributeId'), attr);
  for (const c of arr(n.conditions).map(rec)) {
    const cid = idOf(c.conditionId);
    const before = arr(o.conditions).map(rec).find((x) => idOf(x.conditionId) === cid);
    if (!cid || !before) continue;
    if (before.role !== c.role) parts.push(`role of ${cond(cid)} from ${roleOf(before.role)} to ${roleOf(c.role)}`);
    const offsets = (v: unknown) => arr(v).map((x) => offsetText(rec(x)));
    if (JSON.stringify(offsets(before.offsets)) !== JSON.stringify(offsets(c.offsets))) parts.push(`checkpoints of ${cond(cid)} now ${offsets(c.offsets).join(', ') || 'none'}`);
    if ((before.pairControl ?? true) !== (c.pairControl ?? true)) parts.push(`${cond(cid)} ${c.pairControl === false ? 'no longer paired' : 'paired again'} with a same-day control reading`);
  }
  for (const a of arr(n.attributes).map(rec)) {
    const aid = idOf(a.attributeId);
    const before = arr(o.attributes).map(rec).find((x) => idOf(x.attributeId) === aid);
    if (aid && before && JSON.stringify(before.criterion) !== JSON.stringify(a.criterion)) {
      const info = names.attributes.get(aid);
      parts.push(`criterion of ${attr(aid)} now ${criterionText(a.criterion as Criterion, { unit: info?.unit, scale: info?.scale })}`);
    }
  }
  return parts.join('; ');
}

const roleOf = (r: unknown) => (typeof r === 'string' && r in CONDITION_ROLE_LABELS ? CONDITION_ROLE_LABELS[r as ConditionRole].toLowerCase() : 'none');
/** "Week 4", "Cycle 3", "Day 0", as the schedule labels checkpoints. */
const offsetText = (o: Rec) => (typeof o.n === 'number' && typeof o.unit === 'string' ? offsetLabel(o as Offset) : '?');

/** Formula lines compared by ingredient: "Xanthan gum 0.3 % → 0.5 %", "added Glycerin 3 %". */
function lineChanges(oldLines: unknown, newLines: unknown, names: AuditNames): string {
  const a = arr(oldLines).map(rec);
  const b = arr(newLines).map(rec);
  const name = (l: Rec) => {
    const iid = idOf(l.ingredientId);
    return (iid && names.ingredients.get(iid)) || 'an ingredient';
  };
  const pct = (l: Rec) => (typeof l.percent === 'number' ? `${formatNumber(l.percent)} %` : '?');
  const parts: string[] = [];
  for (const l of b) {
    const before = a.find((x) => x.ingredientId === l.ingredientId);
    if (!before) parts.push(`added ${name(l)} ${pct(l)}`);
    else {
      if (before.percent !== l.percent) parts.push(`${name(l)} from ${pct(before)} to ${pct(l)}`);
      if (before.phase !== l.phase) parts.push(`${name(l)} moved from phase ${String(before.phase)} to ${String(l.phase)}`);
    }
  }
  for (const l of a) if (!b.some((x) => x.ingredientId === l.ingredientId)) parts.push(`removed ${name(l)}`);
  return parts.join('; ');
}
