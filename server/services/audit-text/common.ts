/** The shapes audit sentences are built from, and small readers of the stored JSON values. */
import type { AttributeKind } from '../../../shared/compute/criteria';
import type { AttributeScaleStep, MethodField } from '../../../shared/domain';

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

export interface AttrInfo {
  name: string;
  kind: AttributeKind;
  unit: string | null;
  decimals: number;
  scale: AttributeScaleStep[] | null;
  methodFields: MethodField[] | null;
}

export interface ReadingInfo {
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

export type Rec = Record<string, unknown>;
export const rec = (v: unknown): Rec => (v && typeof v === 'object' && !Array.isArray(v) ? (v as Rec) : {});
export const idOf = (v: unknown): number | null => {
  const n = typeof v === 'number' ? v : typeof v === 'string' && /^\d+$/.test(v) ? Number(v) : NaN;
  return Number.isSafeInteger(n) && n > 0 ? n : null;
};
export const arr = (v: unknown): unknown[] => (Array.isArray(v) ? v : []);
export const str = (v: unknown): string | null => (typeof v === 'string' && v.trim() !== '' ? v : v == null ? null : typeof v === 'number' ? String(v) : null);
