/**
 * Client helpers for the owner's audit trail. The entry's sentence and its action label come from the
 * server (server/services/audit-text/, shared/audit-words.ts); here: the time in the lab's zone and
 * the raw record as stored, for the "Raw record" view. Pure; no I/O.
 */
import type { AuditRow } from '@shared/schemas/records';

export { auditActionLabel as actionLabel } from '@shared/audit-words';

/** The stored row as indented JSON, exactly as kept in the audit log (the sentence is derived from it). */
export function rawRecord(row: Pick<AuditRow, 'id' | 'at' | 'action' | 'entity' | 'entityId' | 'oldValue' | 'newValue' | 'reason'>): string {
  const { id, at, action, entity, entityId, oldValue, newValue, reason } = row;
  return JSON.stringify({ id, at, action, entity, entityId, oldValue, newValue, reason }, null, 2);
}

/** How an action is shown beside its label: a marker for refusals and lockouts, so state is never colour alone. */
export function actionTone(action: string): 'alert' | 'plain' {
  return action === 'sign_failed' || action === 'lockout' ? 'alert' : 'plain';
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
