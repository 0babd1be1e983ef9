import type { AuditAction } from '../../shared/audit-words';
import type { DbOrTx } from '../db/client';
import { auditLog } from '../db/schema';

export interface AuditEntry {
  labId: number;
  userId: number | null;
  /** One of the audit vocabulary's actions (shared/audit-words.ts gives each its label). */
  action: AuditAction;
  entity: string;
  entityId?: string | number | null;
  studyId?: number | null;
  oldValue?: unknown;
  newValue?: unknown;
  reason?: string | null;
}

const row = (e: AuditEntry) => ({
  labId: e.labId,
  userId: e.userId,
  action: e.action,
  entity: e.entity,
  entityId: e.entityId == null ? null : String(e.entityId),
  studyId: e.studyId ?? (e.entity === 'study' && e.entityId != null ? Number(e.entityId) : null),
  oldValue: e.oldValue ?? null,
  newValue: e.newValue ?? null,
  reason: e.reason ?? null,
});

/** Writes one audit row; call it inside the transaction that makes the change. */
export async function audit(db: DbOrTx, e: AuditEntry): Promise<void> {
  await db.insert(auditLog).values(row(e));
}

/** Writes several audit rows in one statement, in order; inside the transaction that makes the change. */
export async function auditMany(db: DbOrTx, entries: AuditEntry[]): Promise<void> {
  if (entries.length) await db.insert(auditLog).values(entries.map(row));
}
