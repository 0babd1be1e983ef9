/**
 * Audit rows as sentences a reviewer reads ("Signed the release decision for Hand cream B: released,
 * 24 months."): field names in words, values as the screens show them (units, decimals, compared
 * levels and grades in words, dates in the lab's format and time zone). Names are looked up in bulk
 * for a page of rows, one lab-scoped query per kind of record, never one per row.
 */
import { auditActionLabel } from '../../../shared/audit-words';
import type { DbOrTx } from '../../db/client';
import type { AuditSource, AuditWords, LabFormat } from './common';
import { lookUpNames } from './names';
import { auditSentence } from './sentences';

export type { AuditNames, AuditSource, AuditWords, LabFormat } from './common';
export { lookUpNames } from './names';
export { readingText } from './values';
export { auditSentence } from './sentences';

/** Sentences for a page of rows, in order; names looked up once for the page. */
export async function describeAuditRows(db: DbOrTx, labId: number, lab: LabFormat, rows: readonly AuditSource[]): Promise<AuditWords[]> {
  if (!rows.length) return [];
  const names = await lookUpNames(db, labId, rows);
  return rows.map((r) => ({ actionLabel: auditActionLabel(r.action), sentence: auditSentence(r, names, lab) }));
}
