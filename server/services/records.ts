/**
 * Recording observations: the Record sheet, saving a checkpoint's readings,
 * corrections and voids (the old version is kept with who, when and why),
 * and closing a checkpoint when every reading is in.
 */
import { and, asc, desc, eq, inArray, sql } from 'drizzle-orm';
import {
  COMPARED_LEVELS,
  evaluate,
  physicalRangeError,
  type ComparedLevel,
  type Criterion,
  type Evaluation,
} from '../../shared/compute/criteria';
import { addDays } from '../../shared/compute/schedule';
import type { StoredVerdict } from '../../shared/domain';
import type { ObservationView, RecordAttribute, RecordEntry, RecordSheet, RevisionView } from '../../shared/schemas/records';
import type { Attribute } from '../../shared/schemas/studies';
import type { Db, DbOrTx } from '../db/client';
import {
  attributes,
  batches,
  checkpoints,
  observationRevisions,
  observations,
  products,
  samples,
  storageConditions,
  studies,
  studyAttributes,
  studyConditions,
  users,
  variants,
} from '../db/schema';
import { conflict, forbidden, HttpError, notFound } from '../http/errors';
import { audit, auditMany } from './audit';
import { conditionForCautions } from './storage-conditions';
import { checkpointView } from './studies';
import { photosFor } from './photos';

export interface Recorder {
  id: number;
  labId: number;
  role: 'technician' | 'formulator' | 'owner';
}

type ObservationRow = typeof observations.$inferSelect;
type AttributeRow = typeof attributes.$inferSelect;
type Value = number | string | boolean;

const unprocessable = (fields: Record<string, string>) =>
  new HttpError(422, 'unprocessable', Object.values(fields)[0] ?? 'Check the values', fields);

/** The stored value of an observation in its attribute's terms. */
export function valueOf(kind: AttributeRow['kind'], o: Pick<ObservationRow, 'valueNum' | 'valueText' | 'valueBool'>): Value | null {
  switch (kind) {
    case 'measured':
    case 'graded':
      return o.valueNum;
    case 'pass_fail':
      return o.valueBool;
    default:
      return o.valueText;
  }
}

/** Checks a typed value against its attribute; returns the columns to store or a message. */
export function columnsFor(
  a: Pick<AttributeRow, 'kind' | 'code' | 'name' | 'scale' | 'physicalMin' | 'physicalMax' | 'decimals'>,
  value: Value,
): { valueNum: number | null; valueText: string | null; valueBool: boolean | null } | string {
  switch (a.kind) {
    case 'measured': {
      if (typeof value !== 'number') return `${a.name} needs a number`;
      const physical = physicalRangeError(a.code, value);
      if (physical) return physical;
      if (a.physicalMin != null && value < a.physicalMin) return `${a.name} cannot be below ${a.physicalMin}`;
      if (a.physicalMax != null && value > a.physicalMax) return `${a.name} cannot be above ${a.physicalMax}`;
      return { valueNum: value, valueText: null, valueBool: null };
    }
    case 'graded': {
      if (typeof value !== 'number' || !Number.isInteger(value)) return `${a.name} needs a grade`;
      if (a.scale && !a.scale.some((s) => s.grade === value)) return `${value} is not a grade of the ${a.name} scale`;
      return { valueNum: value, valueText: null, valueBool: null };
    }
    case 'compared':
      if (typeof value !== 'string' || !COMPARED_LEVELS.includes(value as ComparedLevel)) {
        return `${a.name} needs one of: no change, slight, marked, severe`;
      }
      return { valueNum: null, valueText: value, valueBool: null };
    case 'pass_fail':
      if (typeof value !== 'boolean') return `${a.name} needs pass or fail`;
      return { valueNum: null, valueText: null, valueBool: value };
    case 'note':
      if (typeof value !== 'string') return `${a.name} needs text`;
      return { valueNum: null, valueText: value, valueBool: null };
  }
}

function evaluateFor(a: AttributeRow, criterion: Criterion, value: Value, baseline: Value | null): Evaluation {
  if (a.kind === 'note') return { verdict: 'no_criterion', message: 'Notes are not judged' };
  return evaluate(criterion, value, typeof baseline === 'number' ? baseline : undefined, {
    name: a.name,
    unit: a.unit ?? undefined,
    gradeLabels: a.scale ? Object.fromEntries(a.scale.map((s) => [s.grade, s.label])) : undefined,
  } as never);
}

interface Context {
  sample: typeof samples.$inferSelect;
  study: typeof studies.$inferSelect;
  checkpoint: typeof checkpoints.$inferSelect;
  attrs: { sa: typeof studyAttributes.$inferSelect; a: AttributeRow }[];
}

/** Sample (by code) and checkpoint of the same study and condition in the member's lab, or 404. */
async function context(db: DbOrTx, labId: number, code: string, checkpointId: number, lock = false): Promise<Context> {
  const [sample] = await db
    .select()
    .from(samples)
    .where(and(eq(samples.labId, labId), eq(samples.code, code.toUpperCase())));
  if (!sample) throw notFound('No such sample in your lab');
  const q = db
    .select()
    .from(checkpoints)
    .where(and(eq(checkpoints.labId, labId), eq(checkpoints.id, checkpointId), eq(checkpoints.studyConditionId, sample.studyConditionId)));
  const [checkpoint] = lock ? await q.for('update') : await q;
  if (!checkpoint) throw notFound('This sample has no such checkpoint');
  const [study] = await db.select().from(studies).where(eq(studies.id, sample.studyId));
  const attrs = await db
    .select({ sa: studyAttributes, a: attributes })
    .from(studyAttributes)
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(eq(studyAttributes.studyId, study.id))
    .orderBy(asc(studyAttributes.position));
  return { sample, study, checkpoint, attrs };
}

/**
 * Day-0 value for change criteria: this sample's own day-0 reading, else the
 * day-0 reading of any sample of the same batch in the study (usually the control's).
 */
async function baselines(db: DbOrTx, ctx: Context): Promise<Map<number, { value: Value; label: string; sampleCode: string }>> {
  const rows = await db
    .select({ o: observations, code: samples.code, own: sql<number>`${samples.id} = ${ctx.sample.id}` })
    .from(observations)
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
    .where(
      and(
        eq(observations.labId, ctx.study.labId),
        eq(observations.studyId, ctx.study.id),
        eq(samples.batchId, ctx.sample.batchId),
        eq(checkpoints.offsetN, 0),
        eq(observations.voided, false),
      ),
    )
    .orderBy(desc(sql`${samples.id} = ${ctx.sample.id}`), asc(samples.labelOrder));
  const out = new Map<number, { value: Value; label: string; sampleCode: string }>();
  for (const r of rows) {
    if (out.has(r.o.studyAttributeId) || r.o.verdict === 'not_done') continue;
    const a = ctx.attrs.find((x) => x.sa.id === r.o.studyAttributeId);
    const v = a ? valueOf(a.a.kind, r.o) : null;
    if (v != null) out.set(r.o.studyAttributeId, { value: v, label: 'Day 0', sampleCode: r.code });
  }
  return out;
}

function toView(a: AttributeRow, o: ObservationRow & { who?: string | null }, message: string): ObservationView {
  return {
    id: o.id,
    value: valueOf(a.kind, o),
    method: (o.method as Record<string, string | number> | null) ?? null,
    verdict: o.verdict,
    message,
    notDoneReason: o.notDoneReason,
    recordedBy: o.who ?? '',
    recordedAt: o.recordedAt.toISOString(),
    version: o.version,
    voided: o.voided,
  };
}

export function checkpointOpen(
  study: { status: string },
  cp: { status: string; dueDate: string; windowBefore: number },
  today: string,
  allowEarly: boolean,
): string | null {
  if (study.status === 'in_review' || study.status === 'decided') return 'The study is in review or decided: its observations are locked';
  if (study.status !== 'running') return `The study is ${study.status}`;
  if (cp.status === 'missed') return 'This checkpoint was marked missed';
  if (cp.status === 'cancelled') return 'This checkpoint was cancelled';
  const windowStart = addDays(cp.dueDate, -cp.windowBefore);
  if (today < windowStart && !allowEarly) return `This checkpoint opens on ${windowStart}`;
  return null;
}

export async function recordSheet(db: Db, labId: number, code: string, checkpointId: number, today: string): Promise<RecordSheet> {
  const ctx = await context(db, labId, code, checkpointId);
  const [base, current, previous, control, siblings, photos, cond, meta] = await Promise.all([
    baselines(db, ctx),
    db
      .select({ o: observations, who: users.name })
      .from(observations)
      .innerJoin(users, eq(users.id, observations.recordedBy))
      .where(and(eq(observations.sampleId, ctx.sample.id), eq(observations.checkpointId, checkpointId))),
    // The latest earlier checkpoint's value of this sample, per attribute.
    db
      .select({ o: observations, label: checkpoints.label, due: checkpoints.dueDate })
      .from(observations)
      .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
      .where(
        and(
          eq(observations.sampleId, ctx.sample.id),
          eq(observations.voided, false),
          sql`${checkpoints.dueDate} < ${ctx.checkpoint.dueDate}`,
        ),
      )
      .orderBy(desc(checkpoints.dueDate)),
    // The control condition's latest reading of the same batch up to this checkpoint's window end, per
    // attribute (for compared attributes): a control read weeks later is not what this sample was compared with.
    db
      .select({ o: observations, label: checkpoints.label, code: samples.code })
      .from(observations)
      .innerJoin(samples, eq(samples.id, observations.sampleId))
      .innerJoin(studyConditions, eq(studyConditions.id, samples.studyConditionId))
      .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
      .where(
        and(
          eq(observations.labId, ctx.study.labId),
          eq(observations.studyId, ctx.study.id),
          eq(samples.batchId, ctx.sample.batchId),
          eq(studyConditions.role, 'control'),
          eq(observations.voided, false),
          sql`${samples.id} <> ${ctx.sample.id}`,
          sql`${checkpoints.dueDate} <= ${addDays(ctx.checkpoint.dueDate, ctx.checkpoint.windowAfter)}`,
        ),
      )
      .orderBy(desc(checkpoints.dueDate)),
    db
      .select({
        id: samples.id,
        code: samples.code,
        // Qualified by hand: drizzle leaves columns of a one-table select unqualified, and a bare `id`
        // inside the subquery would name observations.id, not the sample's.
        n: sql<number>`(SELECT count(*) FROM ${observations} AS o WHERE o.sample_id = ${sql.raw('`samples`.`id`')} AND o.checkpoint_id = ${checkpointId} AND o.voided = false)`,
      })
      .from(samples)
      .where(eq(samples.studyConditionId, ctx.sample.studyConditionId))
      .orderBy(asc(samples.labelOrder)),
    photosFor(db, labId, { sampleId: ctx.sample.id, checkpointId }),
    db
      .select({ ...conditionForCautions, role: studyConditions.role })
      .from(studyConditions)
      .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
      .where(eq(studyConditions.id, ctx.sample.studyConditionId)),
    db
      .select({ product: products.name, vCode: variants.code, vName: variants.name, lot: batches.lotCode })
      .from(batches)
      .innerJoin(variants, eq(variants.id, batches.variantId))
      .innerJoin(products, eq(products.id, variants.productId))
      .where(eq(batches.id, ctx.sample.batchId)),
  ]);

  // This checkpoint's state and counts, as the study page shows them (recorded of expected readings).
  const cpView = checkpointView(
    ctx.checkpoint,
    today,
    siblings.reduce((n, x) => n + Number(x.n), 0),
    siblings.length * ctx.attrs.length,
  );
  const closedReason = checkpointOpen(ctx.study, ctx.checkpoint, today, false);
  const attrsOut: RecordAttribute[] = ctx.attrs.map(({ sa, a }) => {
    const cur = current.find((c) => c.o.studyAttributeId === sa.id);
    const b = base.get(sa.id) ?? null;
    const prev = previous.find((p) => p.o.studyAttributeId === sa.id);
    // A control sample is not compared with itself: no control reference on the control condition.
    const ctl = a.kind === 'compared' && cond[0].role !== 'control' ? control.find((c) => c.o.studyAttributeId === sa.id) : undefined;
    let message = '';
    if (cur) {
      const v = valueOf(a.kind, cur.o);
      message = cur.o.verdict === 'not_done' ? `Not done: ${cur.o.notDoneReason}` : v == null ? '' : evaluateFor(a, sa.criterion, v, b?.value ?? null).message;
    }
    return {
      studyAttributeId: sa.id,
      attribute: attributeView(a),
      criterion: sa.criterion,
      baseline: b,
      previous: prev && valueOf(a.kind, prev.o) != null ? { value: valueOf(a.kind, prev.o)!, label: prev.label } : null,
      control: ctl && valueOf(a.kind, ctl.o) != null ? { value: valueOf(a.kind, ctl.o)!, label: ctl.label, sampleCode: ctl.code } : null,
      current: cur ? toView(a, { ...cur.o, who: cur.who }, message) : null,
    };
  });
  const attributeCount = ctx.attrs.length;
  return {
    sample: {
      id: ctx.sample.id,
      code: ctx.sample.code,
      replicate: ctx.sample.replicate,
      study: { id: ctx.study.id, title: ctx.study.title, status: ctx.study.status },
      product: meta[0].product,
      variant: { code: meta[0].vCode, name: meta[0].vName },
      lotCode: meta[0].lot,
      condition: cond[0],
    },
    checkpoint: cpView,
    open: closedReason === null,
    closedReason,
    locked: ctx.study.status === 'in_review' || ctx.study.status === 'decided',
    attributes: attrsOut,
    siblings: siblings.map((s) => ({ code: s.code, complete: Number(s.n) >= attributeCount })),
    photos,
  };
}

export function attributeView(a: AttributeRow): Attribute {
  return {
    id: a.id,
    code: a.code,
    name: a.name,
    kind: a.kind,
    unit: a.unit,
    decimals: a.decimals,
    scale: a.scale ?? null,
    methodFields: a.methodFields ?? null,
    physicalMin: a.physicalMin,
    physicalMax: a.physicalMax,
    defaultCriterion: a.defaultCriterion ?? null,
    description: a.description,
    builtIn: a.builtIn,
    active: a.active,
  };
}

/** Marks the checkpoint done when every sample has every attribute recorded (or not done with a reason), or reopens it. */
async function settleCheckpoint(tx: DbOrTx, checkpointId: number, userId: number): Promise<void> {
  const [cp] = await tx.select().from(checkpoints).where(eq(checkpoints.id, checkpointId));
  const [{ n: sampleCount }] = await tx.select({ n: sql<number>`count(*)` }).from(samples).where(eq(samples.studyConditionId, cp.studyConditionId));
  const [{ n: attrCount }] = await tx.select({ n: sql<number>`count(*)` }).from(studyAttributes).where(eq(studyAttributes.studyId, cp.studyId));
  const [{ n: recorded }] = await tx
    .select({ n: sql<number>`count(*)` })
    .from(observations)
    .where(and(eq(observations.checkpointId, checkpointId), eq(observations.voided, false)));
  const complete = Number(recorded) >= Number(sampleCount) * Number(attrCount);
  if (complete && cp.status === 'open') {
    await tx.update(checkpoints).set({ status: 'done', closedAt: new Date(), closedBy: userId }).where(eq(checkpoints.id, checkpointId));
  } else if (!complete && cp.status === 'done') {
    await tx.update(checkpoints).set({ status: 'open', closedAt: null, closedBy: null }).where(eq(checkpoints.id, checkpointId));
  }
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
): Promise<void> {
  await db.transaction(async (tx) => {
    const ctx = await context(tx, who.labId, code, checkpointId, true);
    const closed = checkpointOpen(ctx.study, ctx.checkpoint, today, allowEarly && who.role !== 'technician');
    if (closed) throw conflict(closed);
    const base = await baselines(tx, ctx);
    const existing = await tx
      .select()
      .from(observations)
      .where(and(eq(observations.sampleId, ctx.sample.id), eq(observations.checkpointId, checkpointId)));
    const fields: Record<string, string> = {};
    const conflicts: Record<string, string> = {};
    const seen = new Set<number>();
    const rows: (typeof observations.$inferInsert & { attr: AttributeRow })[] = [];
    const isDayZero = ctx.checkpoint.offsetN === 0;
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
      if (e.notDoneReason) {
        rows.push({
          labId: who.labId,
          studyId: ctx.study.id,
          sampleId: ctx.sample.id,
          checkpointId,
          studyAttributeId: at.sa.id,
          verdict: 'not_done',
          notDoneReason: e.notDoneReason,
          method: e.method ?? null,
          recordedBy: who.id,
          attr: at.a,
        });
        return;
      }
      const cols = columnsFor(at.a, e.value!);
      if (typeof cols === 'string') {
        fields[`entries.${i}.value`] = cols;
        return;
      }
      const baseline = isDayZero ? e.value! : (base.get(at.sa.id)?.value ?? null);
      const ev = evaluateFor(at.a, at.sa.criterion, e.value!, baseline);
      rows.push({
        labId: who.labId,
        studyId: ctx.study.id,
        sampleId: ctx.sample.id,
        checkpointId,
        studyAttributeId: at.sa.id,
        ...cols,
        method: e.method ?? null,
        verdict: ev.verdict,
        recordedBy: who.id,
        attr: at.a,
      });
    });
    if (Object.keys(fields).length) throw unprocessable(fields);
    if (Object.keys(conflicts).length) throw conflict(Object.values(conflicts)[0], conflicts);
    // One multi-row INSERT for the readings and one for their audit rows (ids in insert order).
    if (!rows.length) throw unprocessable({ entries: 'Nothing to save' });
    const ids = await tx.insert(observations).values(rows.map(({ attr: _attr, ...row }) => row)).$returningId();
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
        },
      })),
    );
    await settleCheckpoint(tx, checkpointId, who.id);
  });
}

async function lockedObservation(tx: DbOrTx, who: Recorder, observationId: number) {
  const [row] = await tx
    .select({ o: observations, a: attributes, sa: studyAttributes, study: studies, cp: checkpoints, code: samples.code })
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

async function keepRevision(tx: DbOrTx, o: ObservationRow, change: 'correction' | 'void', who: Recorder, reason: string) {
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
    const ctx: Context = {
      sample: (await tx.select().from(samples).where(eq(samples.id, row.o.sampleId)))[0],
      study: row.study,
      checkpoint: row.cp,
      attrs: [{ sa: row.sa, a: row.a }],
    };
    const baseline = row.cp.offsetN === 0 ? input.value : ((await baselines(tx, ctx)).get(row.sa.id)?.value ?? null);
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
      newValue: { value: input.value, verdict: ev.verdict, version: row.o.version + 1, sample: row.code, checkpoint: row.cp.label, attribute: row.a.code },
      reason: input.reason,
    });
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
  const names = new Map<number, string>();
  const recorderIds = [...new Set(revs.map((r) => r.r.recordedBy))];
  if (recorderIds.length) {
    for (const u of await db.select({ id: users.id, name: users.name }).from(users).where(inArray(users.id, recorderIds))) names.set(u.id, u.name);
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
    change: null,
    changedBy: null,
    changedAt: null,
    reason: row.o.voided ? 'Voided' : null,
  });
  return out;
}
