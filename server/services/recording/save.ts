/**
 * Saving a checkpoint's readings for one sample: every entry checked, judged against its criterion
 * and baseline, written in one transaction with its audit rows; a failing reading opens an
 * out-of-specification investigation in the same transaction. The checkpoint closes itself when
 * every sample has every attribute.
 */
import { and, eq, inArray, sql } from 'drizzle-orm';
import type { RecordEntry } from '../../../shared/schemas/records';
import type { Db, DbOrTx } from '../../db/client';
import { reusable } from '../../db/prepared';
import { checkpoints, observations, samples, studyAttributes } from '../../db/schema';
import { conflict, HttpError } from '../../http/errors';
import { auditMany } from '../audit';
import { openInvestigations } from '../oos';
import { checkpointOpen, context, samplesAtCheckpoint } from './context';
import type { KnownSheetInputs } from './sheet';
import { checkClientId, deviceColumns, isDuplicateKey, saveHash, type DeviceSave } from './device';
import { baselines, columnsFor, evaluateFor, judgedFrom, mayBeBaseline, valueOf, type AttributeRow } from './values';

export interface Recorder {
  id: number;
  labId: number;
  role: 'technician' | 'formulator' | 'owner';
}

type ObservationRow = typeof observations.$inferSelect;

/**
 * A save's outcome. `read`: what its transaction read (sample, study, the checkpoint as settled,
 * attributes, baselines), which the Record sheet in the answer reuses instead of reading again (issue 14).
 */
export interface SaveResult {
  replayed: boolean;
  read?: KnownSheetInputs;
}

export const unprocessable = (fields: Record<string, string>) =>
  new HttpError(422, 'unprocessable', Object.values(fields)[0] ?? 'Check the values', fields);

// Built once and reused (server/db/prepared.ts): every save runs these.
const checkpointById = reusable((db) => db.select().from(checkpoints).where(eq(checkpoints.id, sql.placeholder('id'))));
/** A pull's samples (its condition's), the study's attributes and the valid readings, in one statement. */
const pullCounts = reusable((db) =>
  db
    .select({
      samples: sql<number>`(SELECT count(*) FROM ${samples} WHERE ${samples.studyConditionId} = ${sql.placeholder('scId')})`,
      attrs: sql<number>`(SELECT count(*) FROM ${studyAttributes} WHERE ${studyAttributes.studyId} = ${sql.placeholder('studyId')})`,
      recorded: sql<number>`(SELECT count(*) FROM ${observations} WHERE ${observations.checkpointId} = ${sql.placeholder('id')} AND ${observations.voided} = false)`,
    })
    .from(sql`(SELECT 1) AS one`),
);
const recordedAt = reusable((db) => db.select({ studyAttributeId: observations.studyAttributeId }).from(observations).where(and(eq(observations.sampleId, sql.placeholder('sampleId')), eq(observations.checkpointId, sql.placeholder('checkpointId')))));

/**
 * Marks the checkpoint done when every sample has every attribute recorded (or not done with a reason), or reopens it.
 * `locked`: the checkpoint row as this transaction read it with FOR UPDATE (saves reading it again).
 */
export async function settleCheckpoint(tx: DbOrTx, checkpointId: number, userId: number, locked?: typeof checkpoints.$inferSelect): Promise<typeof checkpoints.$inferSelect> {
  const cp = locked ?? (await checkpointById(tx, { id: checkpointId }))[0];
  if (cp.kind === 'extra_day0') return cp;
  let sampleCount: number, attrCount: number, recorded: number;
  if (cp.kind !== 'initial') {
    const [c] = await pullCounts(tx, { scId: cp.studyConditionId, studyId: cp.studyId, id: checkpointId });
    [sampleCount, attrCount, recorded] = [Number(c.samples), Number(c.attrs), Number(c.recorded)];
  } else {
    [{ n: sampleCount }] = await tx.select({ n: sql<number>`count(*)` }).from(samples).where(samplesAtCheckpoint(cp));
    [{ n: attrCount }] = await tx.select({ n: sql<number>`count(*)` }).from(studyAttributes).where(eq(studyAttributes.studyId, cp.studyId));
    [{ n: recorded }] = await tx
      .select({ n: sql<number>`count(*)` })
      .from(observations)
      .where(and(eq(observations.checkpointId, checkpointId), eq(observations.voided, false)));
  }
  const complete = Number(sampleCount) > 0 && Number(recorded) >= Number(sampleCount) * Number(attrCount);
  // Always one write to the checkpoint row, so concurrent saves on two cluster nodes conflict (see checkpoints.settles).
  const settles = sql`${checkpoints.settles} + 1`;
  if (complete && cp.status === 'open') {
    const closed = { status: 'done' as const, closedAt: new Date(), closedBy: userId };
    await tx.update(checkpoints).set({ ...closed, settles }).where(eq(checkpoints.id, checkpointId));
    return { ...cp, ...closed, settles: cp.settles + 1 };
  }
  if (!complete && cp.status === 'done') {
    const reopened = { status: 'open' as const, closedAt: null, closedBy: null };
    await tx.update(checkpoints).set({ ...reopened, settles }).where(eq(checkpoints.id, checkpointId));
    return { ...cp, ...reopened, settles: cp.settles + 1 };
  }
  await tx.update(checkpoints).set({ settles }).where(eq(checkpoints.id, checkpointId));
  return { ...cp, settles: cp.settles + 1 };
}

/**
 * Saves readings for one sample at one checkpoint. Each attribute is recorded
 * once; a second save of an attribute answers 409 (use a correction with a
 * reason). Nothing is kept unless every entry is valid.
 */
export async function recordObservations(
  db: Db,
  who: Recorder,
  code: string,
  checkpointId: number,
  entries: RecordEntry[],
  today: string,
  allowEarly: boolean,
  device: DeviceSave = {},
): Promise<SaveResult> {
  const hash = saveHash(code, checkpointId, entries);
  try {
    return await saveOnce(db, who, code, checkpointId, entries, today, allowEarly, device, hash);
  } catch (err) {
    // The same save sent twice at once: the second meets the first's rows; it answers as a resend.
    if (device.clientId && isDuplicateKey(err) && (await checkClientId(db, who.labId, who.id, device, hash)) === 'replay') return { replayed: true };
    throw err;
  }
}

async function saveOnce(
  db: Db,
  who: Recorder,
  code: string,
  checkpointId: number,
  entries: RecordEntry[],
  today: string,
  allowEarly: boolean,
  device: DeviceSave,
  hash: string,
): Promise<SaveResult> {
  return db.transaction(async (tx) => {
    const ctx = await context(tx, who.labId, code, checkpointId, true);
    // A resend from a device's outbox answers before the open check: its first send may have closed the checkpoint.
    if ((await checkClientId(tx, who.labId, who.id, device, hash)) === 'replay') return { replayed: true };
    const closed = checkpointOpen(ctx.study, ctx.checkpoint, today, allowEarly && who.role !== 'technician');
    if (closed) throw conflict(closed);
    const base = await baselines(tx, ctx.study, ctx.sample, ctx.attrs);
    const existing = await recordedAt(tx, { sampleId: ctx.sample.id, checkpointId });
    const fields: Record<string, string> = {};
    const conflicts: Record<string, string> = {};
    const seen = new Set<number>();
    const rows: (typeof observations.$inferInsert & { attr: AttributeRow; message: string })[] = [];
    const fromDevice = deviceColumns(device, hash);
    entries.forEach((e, i) => {
      const at = ctx.attrs.find((x) => x.sa.id === e.studyAttributeId);
      if (!at) {
        fields[`entries.${i}.studyAttributeId`] = 'Not an attribute of this study';
        return;
      }
      if (seen.has(e.studyAttributeId)) {
        fields[`entries.${i}.studyAttributeId`] = 'Listed twice';
        return;
      }
      seen.add(e.studyAttributeId);
      if (existing.some((o) => o.studyAttributeId === e.studyAttributeId)) {
        conflicts[`entries.${i}.value`] = `${at.a.name} is already recorded here; correct it with a reason instead`;
        return;
      }
      const common = { labId: who.labId, studyId: ctx.study.id, sampleId: ctx.sample.id, checkpointId, studyAttributeId: at.sa.id, method: e.method ?? null, recordedBy: who.id, attr: at.a, ...fromDevice };
      if (e.notDoneReason) {
        rows.push({ ...common, verdict: 'not_done', notDoneReason: e.notDoneReason, message: '' });
        return;
      }
      const cols = columnsFor(at.a, e.value!);
      if (typeof cols === 'string') {
        fields[`entries.${i}.value`] = cols;
        return;
      }
      const ev = evaluateFor(at.a, at.sa.criterion, e.value!, judgedFrom(ctx.checkpoint, base.get(at.sa.id), e.value!));
      rows.push({ ...common, ...cols, verdict: ev.verdict, message: ev.message });
    });
    if (Object.keys(fields).length) throw unprocessable(fields);
    if (Object.keys(conflicts).length) throw conflict(Object.values(conflicts)[0], conflicts);
    // One multi-row INSERT for the readings and one for their audit rows (ids in insert order).
    if (!rows.length) throw unprocessable({ entries: 'Nothing to save' });
    await tx.insert(observations).values(rows.map(({ attr: _attr, message: _m, ...row }) => row));
    // Ids by the cell's unique key, not $returningId: that counts up from insertId by 1, while a Galera
    // cluster spaces a multi-row INSERT's ids by auto_increment_increment (the node count).
    const made = await tx
      .select({ id: observations.id, studyAttributeId: observations.studyAttributeId })
      .from(observations)
      .where(and(eq(observations.sampleId, ctx.sample.id), eq(observations.checkpointId, checkpointId), inArray(observations.studyAttributeId, rows.map((r) => r.studyAttributeId))));
    const idOf = new Map(made.map((m) => [m.studyAttributeId, m.id]));
    const ids = rows.map((r) => ({ id: idOf.get(r.studyAttributeId)! }));
    await auditMany(
      tx,
      rows.map(({ attr, ...row }, i) => ({
        labId: who.labId,
        userId: who.id,
        action: 'create' as const,
        entity: 'observation',
        entityId: ids[i].id,
        studyId: ctx.study.id,
        newValue: {
          sample: ctx.sample.code,
          checkpoint: ctx.checkpoint.label,
          attribute: attr.code,
          value: valueOf(attr.kind, row as ObservationRow),
          method: row.method,
          verdict: row.verdict,
          notDoneReason: row.notDoneReason ?? undefined,
          ...(row.deviceRecordedAt ? { deviceRecordedAt: row.deviceRecordedAt.toISOString(), deviceClockOffsetS: row.deviceClockOffsetS, clientId: row.clientId ?? undefined } : {}),
        },
      })),
    );
    await openInvestigations(
      tx,
      who,
      ctx.study,
      rows.flatMap((r, i) =>
        r.verdict === 'fail'
          ? [
              {
                observationId: ids[i].id,
                sampleId: ctx.sample.id,
                sampleCode: ctx.sample.code,
                checkpointId,
                checkpointLabel: ctx.checkpoint.label,
                studyAttributeId: r.studyAttributeId,
                attributeName: r.attr.name,
                value: valueOf(r.attr.kind, r as ObservationRow)!,
                message: r.message,
              },
            ]
          : [],
      ),
    );
    const settled = await settleCheckpoint(tx, checkpointId, who.id, ctx.checkpoint);
    // Where this save's readings may be baselines, the sheet reads them again; elsewhere they are as read here.
    return { replayed: false, read: { ctx: { ...ctx, checkpoint: settled }, ...(mayBeBaseline(ctx.checkpoint) ? {} : { base }) } };
  });
}
