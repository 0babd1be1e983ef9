/**
 * Corrections and voids keep the old version (value, who, when) with who changed it, when and why;
 * the history of an observation lists every version, bench re-measurements and invalidations.
 */
import { and, asc, eq, inArray } from 'drizzle-orm';
import type { StoredVerdict } from '../../../shared/domain';
import type { RevisionView } from '../../../shared/schemas/records';
import type { Db, DbOrTx } from '../../db/client';
import { attributes, checkpoints, observationRevisions, observations, oosInvestigations, samples, studies, studyAttributes, users } from '../../db/schema';
import { conflict, forbidden, notFound } from '../../http/errors';
import { audit } from '../audit';
import { openInvestigations } from '../oos';
import { settleCheckpoint, unprocessable, type Recorder } from './save';
import { deviceTimes } from './device';
import { baselineFor, columnsFor, evaluateFor, valueOf, type Value } from './values';

type ObservationRow = typeof observations.$inferSelect;

async function lockedObservation(tx: DbOrTx, who: Recorder, observationId: number) {
  const [row] = await tx
    .select({ o: observations, a: attributes, sa: studyAttributes, study: studies, cp: checkpoints, sample: samples })
    .from(observations)
    .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .innerJoin(studies, eq(studies.id, observations.studyId))
    .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .where(and(eq(observations.labId, who.labId), eq(observations.id, observationId)))
    .for('update');
  if (!row) throw notFound('No such observation in your lab');
  const locked = row.study.status === 'in_review' || row.study.status === 'decided';
  if (locked && who.role !== 'owner') throw forbidden('This study is in review or decided: only an owner can correct it, and that reopens the review');
  if (row.study.status === 'cancelled') throw conflict('The study was cancelled');
  return { ...row, locked };
}

/** Keeps the version about to change (value, who, when) with who changes it, when and why. */
export async function keepRevision(tx: DbOrTx, o: ObservationRow, change: 'correction' | 'void' | 'invalidated', who: { id: number }, reason: string) {
  await tx.insert(observationRevisions).values({
    labId: o.labId,
    observationId: o.id,
    version: o.version,
    valueNum: o.valueNum,
    valueText: o.valueText,
    valueBool: o.valueBool,
    method: o.method,
    verdict: o.verdict,
    notDoneReason: o.notDoneReason,
    recordedBy: o.recordedBy,
    recordedAt: o.recordedAt,
    change,
    changedBy: who.id,
    reason,
  });
}

/** A correction keeps the old version (value, who, when) and records who changed it, when and why. */
export async function correctObservation(
  db: Db,
  who: Recorder,
  observationId: number,
  input: { value: Value; method?: Record<string, string | number>; reason: string },
): Promise<void> {
  await db.transaction(async (tx) => {
    const row = await lockedObservation(tx, who, observationId);
    const cols = columnsFor(row.a, input.value);
    if (typeof cols === 'string') throw unprocessable({ value: cols });
    const baseline = await baselineFor(tx, row.study, row.sample, row.cp, row.sa.id, row.a.kind, input.value);
    const ev = evaluateFor(row.a, row.sa.criterion, input.value, baseline);
    const oldValue = valueOf(row.a.kind, row.o);
    if (!row.o.voided && oldValue === input.value && JSON.stringify(row.o.method ?? null) === JSON.stringify(input.method ?? row.o.method ?? null)) {
      throw conflict('The new value is the same as the recorded one', { value: 'Same as recorded' });
    }
    await keepRevision(tx, row.o, 'correction', who, input.reason);
    await tx
      .update(observations)
      .set({
        ...cols,
        method: input.method ?? row.o.method,
        verdict: ev.verdict,
        notDoneReason: null,
        recordedBy: who.id,
        recordedAt: new Date(),
        version: row.o.version + 1,
        voided: false,
      })
      .where(eq(observations.id, observationId));
    await reopenReviewIfLocked(tx, who, row.study, row.locked, input.reason);
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'update',
      entity: 'observation',
      entityId: observationId,
      studyId: row.study.id,
      oldValue: { value: oldValue, verdict: row.o.verdict, version: row.o.version, voided: row.o.voided },
      newValue: { value: input.value, verdict: ev.verdict, version: row.o.version + 1, sample: row.sample.code, checkpoint: row.cp.label, attribute: row.a.code },
      reason: input.reason,
    });
    // A correction that makes the reading fail is out of specification like any failing reading.
    if (ev.verdict === 'fail') {
      const [open] = await tx.select({ id: oosInvestigations.id }).from(oosInvestigations).where(eq(oosInvestigations.observationId, observationId));
      if (!open) {
        await openInvestigations(tx, who, row.study, [
          {
            observationId,
            sampleId: row.sample.id,
            sampleCode: row.sample.code,
            checkpointId: row.cp.id,
            checkpointLabel: row.cp.label,
            studyAttributeId: row.sa.id,
            attributeName: row.a.name,
            value: input.value,
            message: ev.message,
          },
        ]);
      }
    }
    await settleCheckpoint(tx, row.o.checkpointId, who.id);
  });
}

/** Nothing is deleted: a wrong entry is voided with a reason, and its checkpoint may reopen. */
export async function voidObservation(db: Db, who: Recorder, observationId: number, reason: string): Promise<void> {
  await db.transaction(async (tx) => {
    const row = await lockedObservation(tx, who, observationId);
    if (row.o.voided) throw conflict('Already voided');
    await keepRevision(tx, row.o, 'void', who, reason);
    await tx
      .update(observations)
      .set({ voided: true, version: row.o.version + 1 })
      .where(eq(observations.id, observationId));
    await reopenReviewIfLocked(tx, who, row.study, row.locked, reason);
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'void',
      entity: 'observation',
      entityId: observationId,
      studyId: row.study.id,
      oldValue: { value: valueOf(row.a.kind, row.o), verdict: row.o.verdict, version: row.o.version },
      newValue: { voided: true, version: row.o.version + 1 },
      reason,
    });
    await settleCheckpoint(tx, row.o.checkpointId, who.id);
  });
}

/** A correction to a study in review or decided sends it back to review. */
async function reopenReviewIfLocked(tx: DbOrTx, who: Recorder, study: typeof studies.$inferSelect, locked: boolean, reason: string) {
  if (!locked) return;
  if (study.status === 'decided') {
    await tx.update(studies).set({ status: 'in_review' }).where(eq(studies.id, study.id));
  }
  await audit(tx, {
    labId: who.labId,
    userId: who.id,
    action: 'update',
    entity: 'study',
    entityId: study.id,
    oldValue: { status: study.status },
    newValue: { status: 'in_review', reviewReopened: true },
    reason: `Observation corrected after review began: ${reason}`,
  });
}

/** Every version of an observation, oldest first; a bench re-measurement is shown beside the reading it followed. */
export async function observationHistory(db: Db, labId: number, observationId: number): Promise<RevisionView[]> {
  const [row] = await db
    .select({ o: observations, a: attributes, who: users.name })
    .from(observations)
    .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .innerJoin(users, eq(users.id, observations.recordedBy))
    .where(and(eq(observations.labId, labId), eq(observations.id, observationId)));
  if (!row) throw notFound('No such observation in your lab');
  const revs = await db
    .select({ r: observationRevisions, by: users.name })
    .from(observationRevisions)
    .innerJoin(users, eq(users.id, observationRevisions.changedBy))
    .where(eq(observationRevisions.observationId, observationId))
    .orderBy(asc(observationRevisions.version));
  const [inv] = await db.select().from(oosInvestigations).where(and(eq(oosInvestigations.labId, labId), eq(oosInvestigations.observationId, observationId)));
  const names = new Map<number, string>();
  const ids = [...new Set([...revs.map((r) => r.r.recordedBy), ...(inv?.remeasuredBy ? [inv.remeasuredBy] : [])])];
  if (ids.length) {
    for (const u of await db.select({ id: users.id, name: users.name }).from(users).where(inArray(users.id, ids))) names.set(u.id, u.name);
  }
  const out: RevisionView[] = revs.map(({ r, by }) => ({
    version: r.version,
    value: valueOf(row.a.kind, r),
    method: (r.method as Record<string, string | number> | null) ?? null,
    verdict: r.verdict as StoredVerdict,
    recordedBy: names.get(r.recordedBy) ?? '',
    recordedAt: r.recordedAt.toISOString(),
    change: r.change,
    changedBy: by,
    changedAt: r.changedAt.toISOString(),
    reason: r.reason,
  }));
  out.push({
    version: row.o.version,
    value: row.o.voided ? null : valueOf(row.a.kind, row.o),
    method: (row.o.method as Record<string, string | number> | null) ?? null,
    verdict: row.o.verdict,
    recordedBy: row.who,
    recordedAt: row.o.recordedAt.toISOString(),
    device: deviceTimes(row.o),
    change: null,
    changedBy: null,
    changedAt: null,
    reason: row.o.voided ? 'Voided' : null,
  });
  if (inv?.remeasureValue != null && inv.remeasuredAt) {
    // A second bench reading: kept beside the first, never replacing it (the investigation decides).
    out.push({
      version: row.o.version,
      value: inv.remeasureValue,
      method: (inv.remeasureMethod as Record<string, string | number> | null) ?? null,
      verdict: (inv.remeasureVerdict ?? 'no_criterion') as StoredVerdict,
      recordedBy: names.get(inv.remeasuredBy!) ?? '',
      recordedAt: inv.remeasuredAt.toISOString(),
      change: 'remeasure',
      changedBy: names.get(inv.remeasuredBy!) ?? '',
      changedAt: inv.remeasuredAt.toISOString(),
      reason: inv.benchComment ?? 'Re-measured at the bench after an out-of-specification result',
    });
  }
  return out;
}
