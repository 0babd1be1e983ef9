/** Changes to a running study, each an amendment with a reason: add a pull, end a condition, pair a pull with a control reading, cancel. */
import { and, eq, inArray, isNull, sql } from 'drizzle-orm';
import { generateSchedule, addDays } from '../../../shared/compute/schedule';
import type { AmendmentInput } from '../../../shared/schemas/studies';
import type { Db, DbOrTx } from '../../db/client';
import { amendments, checkpoints, samples, storageConditions, studies, studyConditions } from '../../db/schema';
import { conflict, notFound } from '../../http/errors';
import { audit } from '../audit';
import { bad, cycleHoursOf, type Actor } from './common';

export async function amendStudy(db: Db, actor: Actor, studyId: number, input: AmendmentInput): Promise<void> {
  await db.transaction(async (tx) => {
    const [study] = await tx
      .select()
      .from(studies)
      .where(and(eq(studies.labId, actor.labId), eq(studies.id, studyId)))
      .for('update');
    if (!study) throw notFound('No such study in your lab');
    if (study.status !== 'running') throw conflict(`Only a running study can be amended; this one is ${study.status.replace('_', ' ')}`);

    const conditionOf = async (studyConditionId: number) => {
      const [sc] = await tx
        .select({ sc: studyConditions, cond: storageConditions })
        .from(studyConditions)
        .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
        .where(and(eq(studyConditions.studyId, studyId), eq(studyConditions.id, studyConditionId)));
      if (!sc) throw bad({ studyConditionId: 'Not a condition of this study' });
      return sc;
    };

    const details: Record<string, unknown> = {};
    const [{ id: amendmentId }] = await tx
      .insert(amendments)
      .values({ labId: actor.labId, studyId, kind: input.kind, reason: input.reason, createdBy: actor.id })
      .$returningId();

    if (input.kind === 'add_checkpoint') {
      const { sc, cond } = await conditionOf(input.studyConditionId);
      if (sc.endedOn) throw conflict('This condition has ended', { studyConditionId: 'This condition has ended' });
      const cycleHours = cycleHoursOf(cond);
      if (input.offset.unit === 'cycle' && cycleHours == null) throw bad({ 'offset.unit': 'Cycle checkpoints need a cycling condition' });
      if (input.offset.unit !== 'cycle' && input.offset.n === 0 && cond.kind !== 'mechanical') {
        throw bad({ offset: 'Day 0 is the initial test, done once per batch for the whole study' });
      }
      const exists = await tx
        .select({ id: checkpoints.id })
        .from(checkpoints)
        .where(
          and(
            eq(checkpoints.studyConditionId, sc.id),
            eq(checkpoints.offsetUnit, input.offset.unit),
            eq(checkpoints.offsetN, input.offset.n),
            inArray(checkpoints.status, ['open', 'done', 'missed']),
          ),
        );
      if (exists.length) throw conflict('This condition already has that checkpoint', { offset: 'Already planned' });
      const [s] = generateSchedule({ startDate: study.startDate, offsets: [input.offset], cycleHours: cycleHours ?? undefined });
      const control = sc.role === 'control' ? null : await pairedControlFor(tx, actor.labId, study, sc.pairControl, s, amendmentId);
      await tx.insert(checkpoints).values({
        labId: actor.labId,
        studyId,
        studyConditionId: sc.id,
        kind: 'pull',
        controlCheckpointId: control?.id ?? null,
        offsetUnit: input.offset.unit,
        offsetN: input.offset.n,
        label: s.label,
        dueDate: s.dueDate,
        windowBefore: s.windowBefore,
        windowAfter: s.windowAfter,
        amendmentId,
      });
      await tx
        .update(studyConditions)
        .set({ offsets: [...sc.offsets, input.offset] })
        .where(eq(studyConditions.id, sc.id));
      Object.assign(details, {
        studyConditionId: sc.id,
        condition: cond.name,
        checkpoint: s.label,
        dueDate: s.dueDate,
        ...(control ? { controlReading: control.label, controlAdded: control.added } : {}),
      });
    } else if (input.kind === 'end_condition') {
      const { sc, cond } = await conditionOf(input.studyConditionId);
      if (sc.endedOn) throw conflict('This condition has already ended', { studyConditionId: 'Already ended' });
      if (input.endedOn < study.startDate) throw bad({ endedOn: 'Cannot end before the study started' });
      await tx
        .update(studyConditions)
        .set({ endedOn: input.endedOn, endedReason: input.reason })
        .where(eq(studyConditions.id, sc.id));
      const cancelled = await cancelOpenCheckpoints(tx, studyId, `Condition ended early: ${input.reason}`, sc.id, input.endedOn);
      Object.assign(details, { studyConditionId: sc.id, condition: cond.name, endedOn: input.endedOn, cancelledCheckpoints: cancelled });
    } else if (input.kind === 'pair_control') {
      Object.assign(details, await pairControl(tx, actor.labId, studyId, input.checkpointId, input.controlCheckpointId));
    } else if (input.kind === 'cancel') {
      await tx.update(studies).set({ status: 'cancelled', cancelledReason: input.reason }).where(eq(studies.id, studyId));
      const cancelled = await cancelOpenCheckpoints(tx, studyId, `Study cancelled: ${input.reason}`);
      Object.assign(details, { cancelledCheckpoints: cancelled });
    }
    await tx.update(amendments).set({ details }).where(eq(amendments.id, amendmentId));
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: 'amend',
      entity: 'study',
      entityId: studyId,
      studyId,
      newValue: { kind: input.kind, ...details },
      reason: input.reason,
    });
  });
}

/**
 * The control reading a new pull is paired with: the control's open reading on the same day, added
 * when there is none (on the control condition, marked as part of the amendment). Null when the
 * condition is not paired or the study has no running control.
 */
export async function pairedControlFor(
  tx: DbOrTx,
  labId: number,
  study: { id: number; startDate: string },
  paired: boolean,
  pull: { dueDate: string; offset: { unit: string; n: number }; label: string; windowBefore: number; windowAfter: number },
  amendmentId: number,
): Promise<{ id: number; label: string; added: boolean } | null> {
  if (!paired) return null;
  if (pull.dueDate === study.startDate) {
    const [initial] = await tx.select({ id: checkpoints.id, label: checkpoints.label }).from(checkpoints).where(and(eq(checkpoints.studyId, study.id), eq(checkpoints.kind, 'initial')));
    return initial ? { ...initial, added: false } : null;
  }
  const [control] = await tx
    .select()
    .from(studyConditions)
    .where(and(eq(studyConditions.studyId, study.id), eq(studyConditions.role, 'control'), isNull(studyConditions.endedOn)))
    .orderBy(studyConditions.position)
    .limit(1);
  if (!control) return null;
  const [same] = await tx
    .select({ id: checkpoints.id, label: checkpoints.label })
    .from(checkpoints)
    .where(and(eq(checkpoints.studyConditionId, control.id), eq(checkpoints.dueDate, pull.dueDate), inArray(checkpoints.status, ['open', 'done'])));
  if (same) return { ...same, added: false };
  const days = Math.round((Date.parse(pull.dueDate) - Date.parse(study.startDate)) / 86_400_000);
  const offset = pull.offset.unit === 'cycle' ? { unit: 'day' as const, n: days } : (pull.offset as { unit: 'day' | 'week' | 'month'; n: number });
  const label = pull.offset.unit === 'cycle' ? `Day ${days}` : pull.label;
  const [{ id }] = await tx
    .insert(checkpoints)
    .values({
      labId,
      studyId: study.id,
      studyConditionId: control.id,
      kind: 'pull',
      offsetUnit: offset.unit,
      offsetN: offset.n,
      label,
      dueDate: pull.dueDate,
      windowBefore: pull.windowBefore,
      windowAfter: pull.windowAfter,
      amendmentId,
    })
    .$returningId();
  return { id, label, added: true };
}

/**
 * Pairs a pull with a control reading of the same study chosen by hand (e.g. the control was read a
 * day later): the control must be a reading of the study's control condition, or its initial test,
 * and hold a sample of every batch the pull has.
 */
async function pairControl(tx: DbOrTx, labId: number, studyId: number, checkpointId: number, controlCheckpointId: number) {
  const [pull] = await tx
    .select({ cp: checkpoints, role: studyConditions.role })
    .from(checkpoints)
    .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
    .where(and(eq(checkpoints.labId, labId), eq(checkpoints.studyId, studyId), eq(checkpoints.id, checkpointId)));
  if (!pull) throw bad({ checkpointId: 'Not a checkpoint of this study' });
  if (pull.cp.kind !== 'pull' || pull.role === 'control') throw bad({ checkpointId: 'Only a pull of a stored (not control) condition is paired with a control reading' });
  const [ctl] = await tx
    .select({ cp: checkpoints, role: studyConditions.role })
    .from(checkpoints)
    .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
    .where(and(eq(checkpoints.labId, labId), eq(checkpoints.id, controlCheckpointId)));
  if (!ctl || ctl.cp.studyId !== studyId) throw bad({ controlCheckpointId: 'Not a control reading of this study' });
  if (!(ctl.cp.kind === 'initial' || (ctl.cp.kind === 'pull' && ctl.role === 'control'))) {
    throw bad({ controlCheckpointId: 'Not a reading of the control condition or the initial test' });
  }
  if (ctl.cp.status === 'cancelled' || ctl.cp.status === 'missed') throw bad({ controlCheckpointId: `That control reading was ${ctl.cp.status}` });
  // Same batch: every batch the pull's samples are of needs a sample at the control.
  const pullBatches = await tx
    .selectDistinct({ batchId: samples.batchId })
    .from(samples)
    .where(and(eq(samples.labId, labId), eq(samples.studyConditionId, pull.cp.studyConditionId!)));
  const controlBatches = await tx
    .selectDistinct({ batchId: samples.batchId })
    .from(samples)
    .where(
      and(
        eq(samples.labId, labId),
        eq(samples.studyId, studyId),
        ctl.cp.studyConditionId == null ? isNull(samples.studyConditionId) : eq(samples.studyConditionId, ctl.cp.studyConditionId),
      ),
    );
  const missing = pullBatches.filter((b) => !controlBatches.some((c) => c.batchId === b.batchId));
  if (missing.length) throw bad({ controlCheckpointId: 'That control reading has no sample of the same batch' });
  await tx.update(checkpoints).set({ controlCheckpointId }).where(eq(checkpoints.id, checkpointId));
  return { checkpointId, checkpoint: pull.cp.label, controlCheckpointId, controlReading: ctl.cp.label, controlDate: ctl.cp.dueDate, previousControlCheckpointId: pull.cp.controlCheckpointId };
}

async function cancelOpenCheckpoints(tx: DbOrTx, studyId: number, reason: string, studyConditionId?: number, after?: string): Promise<number> {
  const conds = [eq(checkpoints.studyId, studyId), eq(checkpoints.status, 'open')];
  if (studyConditionId) conds.push(eq(checkpoints.studyConditionId, studyConditionId));
  if (after) conds.push(sql`${checkpoints.dueDate} > ${after}`);
  const [res] = await tx.update(checkpoints).set({ status: 'cancelled', missedReason: reason, closedAt: new Date() }).where(and(...conds));
  return (res as { affectedRows: number }).affectedRows;
}

export async function markMissed(db: Db, actor: Actor, checkpointId: number, reason: string, today: string): Promise<void> {
  await db.transaction(async (tx) => {
    const [cp] = await tx
      .select({ cp: checkpoints, status: studies.status })
      .from(checkpoints)
      .innerJoin(studies, eq(studies.id, checkpoints.studyId))
      .where(and(eq(checkpoints.labId, actor.labId), eq(checkpoints.id, checkpointId)))
      .for('update');
    if (!cp) throw notFound('No such checkpoint in your lab');
    if (cp.status !== 'running') throw conflict('The study is not running');
    if (cp.cp.status !== 'open') throw conflict(`This checkpoint is already ${cp.cp.status}`);
    const windowEnd = addDays(cp.cp.dueDate, cp.cp.windowAfter);
    if (today <= windowEnd) throw conflict(`The window is open until ${windowEnd}; mark it missed only after that`, { reason: 'The window has not closed yet' });
    await tx
      .update(checkpoints)
      .set({ status: 'missed', missedReason: reason, closedAt: new Date(), closedBy: actor.id })
      .where(eq(checkpoints.id, checkpointId));
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: 'update',
      entity: 'checkpoint',
      entityId: checkpointId,
      studyId: cp.cp.studyId,
      oldValue: { status: 'open' },
      newValue: { status: 'missed' },
      reason,
    });
  });
}
