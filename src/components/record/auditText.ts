/**
 * Audit rows in words for the owner's audit trail: the action, what it touched (with the sample,
 * checkpoint or name it carries), and the change as "key: old → new" lines in compact, readable
 * JSON. Pure; no I/O.
 */
import type { AuditRow } from '@shared/schemas/records';

export const ACTION_LABELS: Readonly<Record<string, string>> = {
  create: 'Created',
  update: 'Changed',
  delete: 'Deleted',
  void: 'Voided',
  sign: 'Signed',
  sign_in: 'Signed in',
  lockout: 'Locked out',
  amend: 'Amended',
  import: 'Imported',
  remeasure: 'Re-measured',
  confirm: 'Confirmed at the bench',
  close: 'Closed',
  migrate: 'Migrated',
};

const ENTITY_LABELS: Readonly<Record<string, string>> = {
  observation: 'Reading',
  photo: 'Photo',
  study: 'Study',
  checkpoint: 'Checkpoint',
  storage_condition: 'Storage condition',
  chamber_log: 'Chamber log',
  user: 'Person',
  invitation: 'Invitation',
  lab: 'Lab settings',
  attribute: 'Attribute',
  batch: 'Batch',
  product: 'Product',
  variant: 'Variant',
  ingredient: 'Ingredient',
  formulas: 'Formulas',
  oos_investigation: 'Out-of-specification investigation',
};

/** Keys that say which thing a row is about; shown under "What", not as changes. */
const CONTEXT_KEYS = ['sample', 'checkpoint', 'attribute', 'title', 'name', 'code', 'lotCode', 'email', 'label'];

export function entityLabel(entity: string): string {
  return ENTITY_LABELS[entity] ?? entity.replace(/_/g, ' ').replace(/^./, (c) => c.toUpperCase());
}

export function actionLabel(action: string): string {
  return ACTION_LABELS[action] ?? action.replace(/_/g, ' ');
}

/** A value in compact JSON-like text: strings bare, objects as "a: 1, b: x", arrays in brackets; long text cut at `max`. */
export function compact(v: unknown, max = 160): string {
  const s = compactInner(v, 0);
  return s.length > max ? `${s.slice(0, max - 1)}…` : s;
}

function compactInner(v: unknown, depth: number): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'string') return depth > 0 && /[,:{}]/.test(v) ? JSON.stringify(v) : v;
  if (typeof v === 'number' || typeof v === 'boolean') return String(v);
  if (Array.isArray(v)) return `[${v.map((x) => compactInner(x, depth + 1)).join(', ')}]`;
  if (typeof v === 'object') {
    const parts = Object.entries(v as Record<string, unknown>)
      .filter(([, x]) => x !== undefined)
      .map(([k, x]) => `${k}: ${compactInner(x, depth + 1)}`);
    return depth > 0 ? `{${parts.join(', ')}}` : parts.join(', ');
  }
  return String(v);
}

/** A value inside a change line: nested objects keep their braces ("{spindle: RV-5, speed: 10}"). */
function compactValue(v: unknown, max = 160): string {
  const s = typeof v === 'string' ? v : compactInner(v, 1);
  return s.length > max ? `${s.slice(0, max - 1)}…` : s;
}

function asRecord(v: unknown): Record<string, unknown> | null {
  return v && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : null;
}

/** "Reading #12 · OV-0001 · Week 1 · ph". */
export function whatText(row: Pick<AuditRow, 'entity' | 'entityId' | 'oldValue' | 'newValue'>): string {
  const ctx = { ...(asRecord(row.oldValue) ?? {}), ...(asRecord(row.newValue) ?? {}) };
  const bits = CONTEXT_KEYS.filter((k) => typeof ctx[k] === 'string' || typeof ctx[k] === 'number').map((k) => String(ctx[k]));
  return [`${entityLabel(row.entity)}${row.entityId ? ` #${row.entityId}` : ''}`, ...bits].join(' · ');
}

export interface ChangeLine {
  key: string;
  /** Absent for a created value. */
  old?: string;
  /** Absent for a removed value. */
  new?: string;
}

/**
 * The change as one line per key: "value: 5.9 → 5.5". A create lists the new values; keys equal
 * on both sides are left out, and so are the context keys shown under "What".
 */
export function changeLines(row: Pick<AuditRow, 'oldValue' | 'newValue'>): ChangeLine[] {
  const o = asRecord(row.oldValue);
  const n = asRecord(row.newValue);
  if (!o && !n) {
    if (row.oldValue == null && row.newValue == null) return [];
    return [{ key: 'value', old: row.oldValue == null ? undefined : compact(row.oldValue), new: row.newValue == null ? undefined : compact(row.newValue) }];
  }
  const keys = [...new Set([...Object.keys(o ?? {}), ...Object.keys(n ?? {})])].filter((k) => !CONTEXT_KEYS.includes(k));
  const out: ChangeLine[] = [];
  for (const k of keys) {
    const a = o?.[k];
    const b = n?.[k];
    if (a == null && b == null) continue;
    if (o && n && JSON.stringify(a) === JSON.stringify(b)) continue;
    out.push({ key: k, old: o && a !== undefined ? compactValue(a) : undefined, new: n && b !== undefined ? compactValue(b) : undefined });
  }
  return out;
}

/** Date and time with seconds in the lab's zone and date format ('DD/MM/YYYY' etc.). */
export function auditTime(iso: string, timeZone: string, dateFormat = 'YYYY-MM-DD'): string {
  const t = new Date(iso);
  if (Number.isNaN(t.getTime())) return iso;
  const parts: Record<string, string> = {};
  for (const p of new Intl.DateTimeFormat('en-US', {
    timeZone,
    hourCycle: 'h23',
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    second: '2-digit',
  }).formatToParts(t)) {
    parts[p.type] = p.value;
  }
  const date = (dateFormat || 'YYYY-MM-DD').replace('YYYY', parts.year).replace('MM', parts.month).replace('DD', parts.day);
  return `${date} ${parts.hour}:${parts.minute}:${parts.second}`;
}
