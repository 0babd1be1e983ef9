/**
 * Data changes that follow a schema migration, applied with the migrating account right after the
 * schema migrations (server/db/migrate.ts). Each is idempotent: it looks for work left to do.
 *
 * One initial test per batch (migration 0007): studies started before it have a day 0 in every
 * condition. For each running study without a signed decision (a signed record is never
 * restructured; studies in review, decided or cancelled keep their day 0 per condition, and the app
 * reads both forms) this makes the study-level initial checkpoint; for each batch the
 * earliest complete set of day-0 readings (complete: every sample of the batch in that condition has
 * every attribute; earliest: finished first) moves to the initial checkpoint (the readings keep their
 * sample, value, who and when; only their checkpoint changes, and their photos follow); the other
 * day-0 readings stay where they were as extra readings ('extra_day0'); day-0 checkpoints left
 * empty are cancelled. Pulls are paired with the control reading of the same day where the control
 * has one. One audit row per study lists what moved. No reading is deleted or changed in value.
 */
import { and, asc, eq, inArray, sql } from 'drizzle-orm';
import type { Db } from './client';
import type { LogSummary } from '../../shared/schemas/storage';
import { accumulatorOptions } from '../services/chamber-logs';
import { backfillRollups } from '../services/chamber-rollups';
import { ensureStarterAttributes } from '../services/labs';
import { auditLog, chamberLogs, checkpoints, decisions, labs, observations, photos, samples, storageConditions, studies, studyAttributes, studyConditions } from './schema';

export async function runDataMigrations(db: Db): Promise<void> {
  await initialTestPerBatch(db);
  await stripDraftDayZero(db);
  await chamberRollups(db);
  await starterAttributes(db);
}

/** Attributes added to the starter set since a lab was made (migration 0011: checks for balms, scrubs and washes). */
async function starterAttributes(db: Db): Promise<void> {
  for (const lab of await db.select({ id: labs.id }).from(labs)) await ensureStarterAttributes(db, lab.id);
}

/** Hourly roll-ups (migration 0008) for chamber logs stored before them; one transaction per log. */
async function chamberRollups(db: Db): Promise<void> {
  const logs = await db
    .select({ id: chamberLogs.id, labId: chamberLogs.labId, summary: chamberLogs.summary })
    .from(chamberLogs)
    .where(and(sql`${chamberLogs.readingCount} > 0`, sql`NOT EXISTS (SELECT 1 FROM chamber_rollups r WHERE r.log_id = ${chamberLogs.id})`));
  for (const log of logs) {
    const band = (log.summary as LogSummary | null)?.band;
    if (band) await backfillRollups(db, log, accumulatorOptions(band));
  }
}

async function initialTestPerBatch(db: Db): Promise<void> {
  const started = await db
    .select({ id: studies.id, labId: studies.labId, startDate: studies.startDate })
    .from(studies)
    .where(
      and(
        eq(studies.status, 'running'),
        sql`NOT EXISTS (SELECT 1 FROM ${checkpoints} c WHERE c.study_id = ${studies.id} AND c.kind = 'initial')`,
        // A signed record is never restructured: a study with a decision keeps its day 0 per condition.
        sql`NOT EXISTS (SELECT 1 FROM ${decisions} d WHERE d.study_id = ${studies.id})`,
      ),
    );
  for (const study of started) await migrateStudy(db, study);
}

async function migrateStudy(db: Db, study: { id: number; labId: number; startDate: string }): Promise<void> {
  await db.transaction(async (tx) => {
    // Lock the study: two processes starting at once migrate it once.
    const [locked] = await tx.select({ id: studies.id }).from(studies).where(eq(studies.id, study.id)).for('update');
    const [already] = await tx.select({ id: checkpoints.id }).from(checkpoints).where(and(eq(checkpoints.studyId, study.id), eq(checkpoints.kind, 'initial')));
    if (!locked || already) return;

    const conds = await tx
      .select({ sc: studyConditions, kind: storageConditions.kind, name: storageConditions.name })
      .from(studyConditions)
      .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
      .where(eq(studyConditions.studyId, study.id));
    const cps = await tx.select().from(checkpoints).where(eq(checkpoints.studyId, study.id));
    const [{ n: attrCount }] = await tx.select({ n: sql<number>`count(*)` }).from(studyAttributes).where(eq(studyAttributes.studyId, study.id));
    const sampleRows = await tx.select().from(samples).where(eq(samples.studyId, study.id));

    const dayZero = cps.filter((c) => {
      const cond = conds.find((x) => x.sc.id === c.studyConditionId);
      return c.kind === 'pull' && c.offsetN === 0 && c.offsetUnit !== 'cycle' && cond && cond.kind !== 'mechanical';
    });

    const [{ id: initialId }] = await tx
      .insert(checkpoints)
      .values({
        labId: study.labId,
        studyId: study.id,
        studyConditionId: null,
        kind: 'initial',
        offsetUnit: 'day',
        offsetN: 0,
        label: 'Initial',
        dueDate: study.startDate,
        windowBefore: 0,
        windowAfter: 1,
      })
      .$returningId();

    const obs = dayZero.length
      ? await tx
          .select({ id: observations.id, sampleId: observations.sampleId, checkpointId: observations.checkpointId, attr: observations.studyAttributeId, voided: observations.voided, at: observations.recordedAt })
          .from(observations)
          .where(and(eq(observations.labId, study.labId), eq(observations.studyId, study.id), inArray(observations.checkpointId, dayZero.map((c) => c.id))))
      : [];

    const batchIds = [...new Set(sampleRows.map((s) => s.batchId))];
    const moved: { batchId: number; from: string; condition: string; readings: number; complete: boolean }[] = [];
    let allComplete = batchIds.length > 0;
    for (const batchId of batchIds) {
      // Candidate sets: one per day-0 checkpoint, the readings of this batch's samples there.
      const sets = dayZero
        .map((cp) => {
          const mine = sampleRows.filter((s) => s.batchId === batchId && s.studyConditionId === cp.studyConditionId);
          const rows = obs.filter((o) => o.checkpointId === cp.id && mine.some((s) => s.id === o.sampleId));
          const live = rows.filter((o) => !o.voided);
          const complete = mine.length > 0 && mine.every((s) => new Set(live.filter((o) => o.sampleId === s.id).map((o) => o.attr)).size >= Number(attrCount));
          const finished = rows.length ? Math.max(...rows.map((o) => o.at.getTime())) : Infinity;
          return { cp, rows, complete, finished, live: live.length };
        })
        .filter((x) => x.rows.length > 0)
        .sort((a, b) => Number(b.complete) - Number(a.complete) || (a.complete ? a.finished - b.finished : b.live - a.live || a.finished - b.finished));
      const chosen = sets[0];
      if (!chosen) {
        allComplete = false;
        continue;
      }
      if (!chosen.complete) allComplete = false;
      const ids = chosen.rows.map((o) => o.id);
      await tx.update(observations).set({ checkpointId: initialId }).where(inArray(observations.id, ids));
      const sampleIds = [...new Set(chosen.rows.map((o) => o.sampleId))];
      await tx
        .update(photos)
        .set({ checkpointId: initialId })
        .where(and(eq(photos.checkpointId, chosen.cp.id), inArray(photos.sampleId, sampleIds)));
      const cond = conds.find((x) => x.sc.id === chosen.cp.studyConditionId)!;
      moved.push({ batchId, from: chosen.cp.label, condition: cond.name, readings: ids.length, complete: chosen.complete });
    }

    // What is left on each condition's day 0: extra readings, or nothing (then the checkpoint is not needed).
    const extra: { condition: string; readings: number }[] = [];
    const cancelled: string[] = [];
    for (const cp of dayZero) {
      const [{ n }] = await tx.select({ n: sql<number>`count(*)` }).from(observations).where(eq(observations.checkpointId, cp.id));
      const cond = conds.find((x) => x.sc.id === cp.studyConditionId)!;
      if (Number(n) > 0) {
        await tx.update(checkpoints).set({ kind: 'extra_day0', status: 'done', closedAt: cp.closedAt ?? new Date() }).where(eq(checkpoints.id, cp.id));
        extra.push({ condition: cond.name, readings: Number(n) });
      } else {
        await tx
          .update(checkpoints)
          .set({ status: 'cancelled', missedReason: "Replaced by the study's initial test (one per batch)", closedAt: new Date() })
          .where(eq(checkpoints.id, cp.id));
        cancelled.push(cond.name);
      }
    }
    await tx
      .update(checkpoints)
      .set(allComplete ? { status: 'done', closedAt: new Date() } : { status: 'open' })
      .where(eq(checkpoints.id, initialId));

    // Pair pulls with the control reading of the same day, where the control has one.
    const control = conds.find((x) => x.sc.role === 'control');
    let paired = 0;
    for (const cp of cps) {
      if (cp.kind !== 'pull' || dayZero.includes(cp) || cp.controlCheckpointId != null || cp.studyConditionId === control?.sc.id) continue;
      const same =
        cp.dueDate === study.startDate
          ? initialId
          : cps.find((x) => x.studyConditionId === control?.sc.id && x.kind === 'pull' && x.dueDate === cp.dueDate && x.status !== 'cancelled')?.id;
      if (same) {
        await tx.update(checkpoints).set({ controlCheckpointId: same }).where(eq(checkpoints.id, cp.id));
        paired++;
      }
    }

    await tx.insert(auditLog).values({
      labId: study.labId,
      userId: null,
      action: 'migrate',
      entity: 'study',
      entityId: String(study.id),
      studyId: study.id,
      newValue: { initialCheckpointId: initialId, moved, extraReadings: extra, emptyDayZeroCancelled: cancelled, pullsPaired: paired },
      reason: 'One initial test per batch: the earliest complete day-0 set of each batch became its initial readings; no reading was deleted or changed in value',
    });
  });
}

/** Draft plans lose a day-0 offset a condition no longer needs (the initial test replaces it), where others remain. */
export async function stripDraftDayZero(db: Db): Promise<void> {
  const rows = await db
    .select({ sc: studyConditions, kind: storageConditions.kind })
    .from(studyConditions)
    .innerJoin(studies, eq(studies.id, studyConditions.studyId))
    .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(eq(studies.status, 'draft'))
    .orderBy(asc(studyConditions.id));
  for (const { sc, kind } of rows) {
    if (kind === 'mechanical') continue;
    const kept = sc.offsets.filter((o) => !(o.unit !== 'cycle' && o.n === 0));
    if (kept.length && kept.length < sc.offsets.length) {
      await db.update(studyConditions).set({ offsets: kept }).where(eq(studyConditions.id, sc.id));
    }
  }
}

