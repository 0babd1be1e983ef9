/**
 * Study plans: validation against the lab's data, preview, start (samples and
 * dated checkpoints in one transaction), amendments, and the read models of
 * the study page, the Bench and the label sheet.
 */
import { randomInt } from 'node:crypto';
import { and, asc, eq, inArray, sql } from 'drizzle-orm';
import { CRITERION_KINDS_BY_ATTRIBUTE } from '../../shared/compute/criteria';
import {
  addDays,
  checkpointState,

  generateSchedule,
  localDateInZone,

  type Offset,
} from '../../shared/compute/schedule';
import type { ConditionKind, StudyStatus } from '../../shared/domain';
import { cautionLines } from '../../shared/storage-presets';
import type {
  Amendment,
  AmendmentInput,
  BenchResponse,
  PlanPreview,
  StudyCheckpoint,
  StudyDetail,
  StudyPlanInput,
  StudySummary,
} from '../../shared/schemas/studies';
import type { Db, DbOrTx } from '../db/client';
import {
  amendments,
  attributes,
  batches,
  checkpoints,
  observations,
  products,
  samples,
  storageConditions,
  studies,
  studyAttributes,
  studyBatches,
  studyConditions,
  users,
  variants,
} from '../db/schema';
import { conflict, HttpError, notFound } from '../http/errors';
import { audit } from './audit';

export interface Actor {
  id: number;
  labId: number;
  timeZone: string;
}

const bad = (fields: Record<string, string>) =>
  new HttpError(400, 'validation', `Invalid input: check ${Object.keys(fields).join(', ')}`, fields);

export const todayIn = (timeZone: string, now = new Date()) => localDateInZone(now, timeZone);

/** Length of one freeze-thaw cycle in hours, for cycle-based checkpoints. */
export function cycleHoursOf(c: { kind: ConditionKind; hoursLow: number | null; hoursHigh: number | null }): number | null {
  if (c.kind !== 'cycling' || c.hoursLow == null || c.hoursHigh == null) return null;
  return c.hoursLow + c.hoursHigh;
}

// ------------------------------------------------------------------ plan checks

interface CheckedPlan {
  product: { id: number; name: string; type: string };
  conditionRows: (typeof storageConditions.$inferSelect)[];
  attributeRows: (typeof attributes.$inferSelect)[];
}

/** Checks every id of a plan belongs to the lab and fits together; 400/404 naming the field. */
export async function checkPlan(db: DbOrTx, labId: number, plan: StudyPlanInput): Promise<CheckedPlan> {
  const [product] = await db
    .select({ id: products.id, name: products.name, type: products.type })
    .from(products)
    .where(and(eq(products.labId, labId), eq(products.id, plan.productId)));
  if (!product) throw new HttpError(404, 'not_found', 'No such product in your lab', { productId: 'No such product in your lab' });

  const fields: Record<string, string> = {};
  const dupes = (ids: (number | string)[]) => ids.findIndex((v, i) => ids.indexOf(v) !== i);

  const batchRows = await db
    .select({ id: batches.id, productId: variants.productId })
    .from(batches)
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .where(and(eq(batches.labId, labId), inArray(batches.id, plan.batchIds)));
  plan.batchIds.forEach((bid, i) => {
    const row = batchRows.find((b) => b.id === bid);
    if (!row) fields[`batchIds.${i}`] = 'No such batch in your lab';
    else if (row.productId !== product.id) fields[`batchIds.${i}`] = 'This batch is of another product';
  });
  if (dupes(plan.batchIds) >= 0) fields[`batchIds.${dupes(plan.batchIds)}`] = 'Listed twice';

  const conditionIds = plan.conditions.map((c) => c.conditionId);
  const conditionRows = await db
    .select()
    .from(storageConditions)
    .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, conditionIds)));
  plan.conditions.forEach((pc, i) => {
    const row = conditionRows.find((c) => c.id === pc.conditionId);
    if (!row) {
      fields[`conditions.${i}.conditionId`] = 'No such storage condition in your lab';
      return;
    }
    if (!row.active) fields[`conditions.${i}.conditionId`] = 'This storage condition is no longer in use';
    const cycleHours = cycleHoursOf(row);
    pc.offsets.forEach((o, j) => {
      if (o.unit === 'cycle' && cycleHours == null) {
        fields[`conditions.${i}.offsets.${j}.unit`] = 'Cycle checkpoints need a cycling condition (freeze-thaw)';
      }
    });
    const keys = pc.offsets.map((o) => `${o.unit}:${o.n}`);
    const d = dupes(keys);
    if (d >= 0) fields[`conditions.${i}.offsets.${d}`] = 'This checkpoint is listed twice';
  });
  if (dupes(conditionIds) >= 0) fields[`conditions.${dupes(conditionIds)}.conditionId`] = 'Listed twice';

  const attributeIds = plan.attributes.map((a) => a.attributeId);
  const attributeRows = await db
    .select()
    .from(attributes)
    .where(and(eq(attributes.labId, labId), inArray(attributes.id, attributeIds)));
  plan.attributes.forEach((pa, i) => {
    const row = attributeRows.find((a) => a.id === pa.attributeId);
    if (!row) {
      fields[`attributes.${i}.attributeId`] = 'No such attribute in your lab';
      return;
    }
    if (!CRITERION_KINDS_BY_ATTRIBUTE[row.kind].includes(pa.criterion.kind)) {
      fields[`attributes.${i}.criterion.kind`] = `A ${row.kind.replace('_', '/')} attribute cannot use this kind of criterion`;
    }
    const c = pa.criterion;
    if (c.kind === 'worst_grade' && row.scale && !row.scale.some((s) => s.grade === c.grade)) {
      fields[`attributes.${i}.criterion.grade`] = 'Not a grade of this attribute’s scale';
    }
  });
  if (dupes(attributeIds) >= 0) fields[`attributes.${dupes(attributeIds)}.attributeId`] = 'Listed twice';

  if (plan.responsibleId != null) {
    const [who] = await db
      .select({ id: users.id })
      .from(users)
      .where(and(eq(users.labId, labId), eq(users.id, plan.responsibleId), eq(users.active, true)));
    if (!who) fields.responsibleId = 'No such active member in your lab';
  }

  if (Object.keys(fields).length) throw bad(fields);
  return { product, conditionRows, attributeRows };
}

// ------------------------------------------------------------------ preview

export function previewPlan(plan: StudyPlanInput, checked: CheckedPlan): PlanPreview {
  const warnings: string[] = [];
  const perCondition = plan.conditions.map((pc) => {
    const row = checked.conditionRows.find((c) => c.id === pc.conditionId)!;
    const schedule = generateSchedule({ startDate: plan.startDate, offsets: pc.offsets, cycleHours: cycleHoursOf(row) ?? undefined });
    const weekend = schedule.filter((s) => s.warnings.includes('weekend'));
    if (weekend.length) {
      warnings.push(`${row.name}: ${weekend.map((s) => `${s.label} (${s.dueDate})`).join(', ')} fall on a weekend; the window allows moving the check to a weekday.`);
    }
    return {
      conditionId: row.id,
      name: row.name,
      checkpoints: schedule.map((s) => ({
        label: s.label,
        dueDate: s.dueDate,
        windowStart: s.windowStart,
        windowEnd: s.windowEnd,
        warnings: s.warnings,
      })),
    };
  });
  const hasControl = plan.conditions.some((pc) => pc.role === 'control' || checked.conditionRows.find((c) => c.id === pc.conditionId)?.isControl);
  if (!hasControl) warnings.push('No control condition: odor, color and appearance are judged against a control sample (usually kept at 4-5 °C).');
  const compared = checked.attributeRows.filter((a) => a.kind === 'compared');
  if (!hasControl && compared.length) warnings.push(`${compared.map((a) => a.name).join(', ')} compare with a control that this plan does not have.`);
  const sampleCount = plan.batchIds.length * plan.conditions.length * plan.samplesPerCell;
  return {
    sampleCount,
    containerCount: sampleCount,
    gramsPerBatch: plan.fillGrams ? Math.round(plan.conditions.length * plan.samplesPerCell * plan.fillGrams * 100) / 100 : null,
    perCondition,
    warnings,
    cautions: cautionLines(plan.conditions.map((pc) => checked.conditionRows.find((c) => c.id === pc.conditionId)!)),
  };
}

// ------------------------------------------------------------------ save plan

export async function savePlan(db: Db, actor: Actor, plan: StudyPlanInput, studyId?: number): Promise<number> {
  return db.transaction(async (tx) => {
    await checkPlan(tx, actor.labId, plan);
    let id = studyId;
    let old: unknown = null;
    if (id != null) {
      const [row] = await tx
        .select()
        .from(studies)
        .where(and(eq(studies.labId, actor.labId), eq(studies.id, id)))
        .for('update');
      if (!row) throw notFound('No such study in your lab');
      if (row.status !== 'draft') throw conflict('This study has started: change it with an amendment and a reason');
      old = await planOf(tx, id);
      await tx
        .update(studies)
        .set(studyColumns(plan))
        .where(eq(studies.id, id));
      await tx.delete(studyBatches).where(eq(studyBatches.studyId, id));
      await tx.delete(studyConditions).where(eq(studyConditions.studyId, id));
      await tx.delete(studyAttributes).where(eq(studyAttributes.studyId, id));
    } else {
      [{ id }] = await tx
        .insert(studies)
        .values({ ...studyColumns(plan), labId: actor.labId, createdBy: actor.id })
        .$returningId();
    }
    await tx.insert(studyBatches).values(plan.batchIds.map((batchId) => ({ studyId: id!, batchId, labId: actor.labId })));
    for (const [position, pc] of plan.conditions.entries()) {
      await tx.insert(studyConditions).values({
        labId: actor.labId,
        studyId: id!,
        conditionId: pc.conditionId,
        role: pc.role,
        position,
        offsets: pc.offsets,
        template: pc.template ?? null,
      });
    }
    await tx.insert(studyAttributes).values(
      plan.attributes.map((pa, position) => ({ labId: actor.labId, studyId: id!, attributeId: pa.attributeId, position, criterion: pa.criterion })),
    );
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: studyId == null ? 'create' : 'update',
      entity: 'study',
      entityId: id,
      oldValue: old,
      newValue: plan,
    });
    return id!;
  });
}

function studyColumns(plan: StudyPlanInput) {
  return {
    productId: plan.productId,
    title: plan.title,
    startDate: plan.startDate,
    responsibleId: plan.responsibleId ?? null,
    samplesPerCell: plan.samplesPerCell,
    containerDescription: plan.containerDescription,
    fillGrams: plan.fillGrams ?? null,
    notes: plan.notes ?? null,
  };
}

/** The stored plan in the input's shape (for audit rows and editing). */
export async function planOf(db: DbOrTx, studyId: number): Promise<StudyPlanInput> {
  const [s] = await db.select().from(studies).where(eq(studies.id, studyId));
  const b = await db.select({ batchId: studyBatches.batchId }).from(studyBatches).where(eq(studyBatches.studyId, studyId));
  const c = await db.select().from(studyConditions).where(eq(studyConditions.studyId, studyId)).orderBy(asc(studyConditions.position));
  const a = await db.select().from(studyAttributes).where(eq(studyAttributes.studyId, studyId)).orderBy(asc(studyAttributes.position));
  return {
    productId: s.productId,
    title: s.title,
    startDate: s.startDate,
    batchIds: b.map((r) => r.batchId),
    conditions: c.map((r) => ({ conditionId: r.conditionId, role: r.role, template: r.template, offsets: r.offsets })),
    attributes: a.map((r) => ({ attributeId: r.attributeId, criterion: r.criterion })),
    samplesPerCell: s.samplesPerCell,
    containerDescription: s.containerDescription,
    fillGrams: s.fillGrams,
    responsibleId: s.responsibleId,
    notes: s.notes,
  };
}

// ------------------------------------------------------------------ start

/** Crockford-style alphabet without 0/O, 1/I/L and U: easy to read off a label. */
const CODE_ALPHABET = '23456789ABCDEFGHJKMNPQRSTVWXYZ';
export function newSampleCode(): string {
  let s = '';
  for (let i = 0; i < 6; i++) s += CODE_ALPHABET[randomInt(CODE_ALPHABET.length)];
  return s;
}

/**
 * Starts a draft study: fixes samples and dated checkpoints in one transaction.
 * The study row is locked first, so two starts at once make one set of samples:
 * the second waits, then finds the study running and answers 409.
 */
export async function startStudy(db: Db, actor: Actor, studyId: number): Promise<void> {
  await db.transaction(async (tx) => {
    const [study] = await tx
      .select()
      .from(studies)
      .where(and(eq(studies.labId, actor.labId), eq(studies.id, studyId)))
      .for('update');
    if (!study) throw notFound('No such study in your lab');
    if (study.status !== 'draft') throw conflict(`This study is already ${study.status.replace('_', ' ')}`);
    const plan = await planOf(tx, studyId);
    const checked = await checkPlan(tx, actor.labId, plan);
    const conditionRows = await tx.select().from(studyConditions).where(eq(studyConditions.studyId, studyId)).orderBy(asc(studyConditions.position));
    const batchRows = await tx
      .select({ id: batches.id, lotCode: batches.lotCode, variantCode: variants.code })
      .from(batches)
      .innerJoin(variants, eq(variants.id, batches.variantId))
      .where(inArray(batches.id, plan.batchIds))
      .orderBy(asc(variants.code), asc(batches.lotCode));

    // Sample codes: unique in the lab; drawn at random and checked against what exists.
    const needed = conditionRows.length * batchRows.length * study.samplesPerCell;
    const codes = new Set<string>();
    while (codes.size < needed) {
      const batch = Array.from({ length: needed - codes.size }, newSampleCode).filter((c) => !codes.has(c));
      const taken = await tx
        .select({ code: samples.code })
        .from(samples)
        .where(and(eq(samples.labId, actor.labId), inArray(samples.code, batch)));
      for (const c of batch) if (!taken.some((t) => t.code === c)) codes.add(c);
    }
    const codeList = [...codes];
    const sampleValues = [];
    let order = 0;
    for (const sc of conditionRows) {
      for (const b of batchRows) {
        for (let r = 1; r <= study.samplesPerCell; r++) {
          sampleValues.push({
            labId: actor.labId,
            studyId,
            batchId: b.id,
            studyConditionId: sc.id,
            code: codeList[order],
            replicate: r,
            labelOrder: ++order,
          });
        }
      }
    }
    await tx.insert(samples).values(sampleValues);

    const checkpointValues = conditionRows.flatMap((sc) => {
      const cond = checked.conditionRows.find((c) => c.id === sc.conditionId)!;
      return generateSchedule({ startDate: study.startDate, offsets: sc.offsets, cycleHours: cycleHoursOf(cond) ?? undefined }).map((s) => ({
        labId: actor.labId,
        studyId,
        studyConditionId: sc.id,
        offsetUnit: s.offset.unit,
        offsetN: s.offset.n,
        label: s.label,
        dueDate: s.dueDate,
        windowBefore: s.windowBefore,
        windowAfter: s.windowAfter,
      }));
    });
    await tx.insert(checkpoints).values(checkpointValues);
    await tx.update(studies).set({ status: 'running', startedAt: new Date(), startedBy: actor.id }).where(eq(studies.id, studyId));
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: 'update',
      entity: 'study',
      entityId: studyId,
      oldValue: { status: 'draft' },
      newValue: { status: 'running', samples: sampleValues.length, checkpoints: checkpointValues.length },
      reason: 'Study started',
    });
  });
}

// ------------------------------------------------------------------ amendments

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
      await tx.insert(checkpoints).values({
        labId: actor.labId,
        studyId,
        studyConditionId: sc.id,
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
      Object.assign(details, { studyConditionId: sc.id, condition: cond.name, checkpoint: s.label, dueDate: s.dueDate });
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
      newValue: { kind: input.kind, ...details },
      reason: input.reason,
    });
  });
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
      oldValue: { status: 'open' },
      newValue: { status: 'missed' },
      reason,
    });
  });
}

// ------------------------------------------------------------------ read models

export function checkpointView(
  row: typeof checkpoints.$inferSelect,
  today: string,
  recorded: number,
  expected: number,
): StudyCheckpoint {
  const state =
    row.status === 'cancelled'
      ? 'cancelled'
      : checkpointState(row.dueDate, row.windowBefore, row.windowAfter, today, row.status === 'done', row.status === 'missed');
  return {
    id: row.id,
    studyConditionId: row.studyConditionId,
    label: row.label,
    offset: { unit: row.offsetUnit, n: row.offsetN } as Offset,
    dueDate: row.dueDate,
    windowStart: addDays(row.dueDate, -row.windowBefore),
    windowEnd: addDays(row.dueDate, row.windowAfter),
    status: row.status,
    state,
    missedReason: row.missedReason,
    recorded,
    expected,
  };
}

export async function studyDetail(db: Db, labId: number, studyId: number, today: string): Promise<StudyDetail> {
  const [row] = await db
    .select({ s: studies, p: { id: products.id, name: products.name, type: products.type }, r: { id: users.id, name: users.name } })
    .from(studies)
    .innerJoin(products, eq(products.id, studies.productId))
    .leftJoin(users, eq(users.id, studies.responsibleId))
    .where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  if (!row) throw notFound('No such study in your lab');
  const [batchRows, condRows, attrRows, sampleRows, cpRows, amendRows, counts] = await Promise.all([
    db
      .select({ b: batches, v: { id: variants.id, code: variants.code, name: variants.name } })
      .from(studyBatches)
      .innerJoin(batches, eq(batches.id, studyBatches.batchId))
      .innerJoin(variants, eq(variants.id, batches.variantId))
      .where(eq(studyBatches.studyId, studyId))
      .orderBy(asc(variants.code), asc(batches.lotCode)),
    db
      .select({ sc: studyConditions, c: storageConditions })
      .from(studyConditions)
      .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
      .where(eq(studyConditions.studyId, studyId))
      .orderBy(asc(studyConditions.position)),
    db
      .select({ sa: studyAttributes, a: attributes })
      .from(studyAttributes)
      .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
      .where(eq(studyAttributes.studyId, studyId))
      .orderBy(asc(studyAttributes.position)),
    db.select().from(samples).where(eq(samples.studyId, studyId)).orderBy(asc(samples.labelOrder)),
    db.select().from(checkpoints).where(eq(checkpoints.studyId, studyId)).orderBy(asc(checkpoints.dueDate), asc(checkpoints.id)),
    db
      .select({ a: amendments, who: users.name })
      .from(amendments)
      .leftJoin(users, eq(users.id, amendments.createdBy))
      .where(eq(amendments.studyId, studyId))
      .orderBy(asc(amendments.createdAt)),
    db
      .select({ checkpointId: observations.checkpointId, n: sql<number>`count(*)` })
      .from(observations)
      .where(and(eq(observations.labId, labId), eq(observations.studyId, studyId), eq(observations.voided, false)))
      .groupBy(observations.checkpointId),
  ]);
  const samplesPerCondition = (scId: number) => sampleRows.filter((s) => s.studyConditionId === scId).length;
  const s = row.s;
  return {
    id: s.id,
    title: s.title,
    status: s.status,
    startDate: s.startDate,
    product: row.p,
    responsible: row.r?.id ? { id: row.r.id, name: row.r.name } : null,
    samplesPerCell: s.samplesPerCell,
    containerDescription: s.containerDescription,
    fillGrams: s.fillGrams,
    notes: s.notes,
    cancelledReason: s.cancelledReason,
    startedAt: s.startedAt?.toISOString() ?? null,
    batches: batchRows.map(({ b, v }) => ({ id: b.id, lotCode: b.lotCode, madeOn: b.madeOn, packaging: b.packaging, variant: v })),
    conditions: condRows.map(({ sc, c }) => ({
      id: sc.id,
      conditionId: c.id,
      name: c.name,
      kind: c.kind,
      location: c.location,
      isControl: c.isControl,
      setpointC: c.setpointC,
      cycleHours: cycleHoursOf(c),
      role: sc.role,
      template: sc.template,
      offsets: sc.offsets,
      endedOn: sc.endedOn,
      endedReason: sc.endedReason,
    })),
    attributes: attrRows.map(({ sa, a }) => ({
      id: sa.id,
      attributeId: a.id,
      code: a.code,
      name: a.name,
      kind: a.kind,
      unit: a.unit,
      decimals: a.decimals,
      criterion: sa.criterion,
    })),
    samples: sampleRows.map((r) => ({
      id: r.id,
      code: r.code,
      studyConditionId: r.studyConditionId,
      batchId: r.batchId,
      replicate: r.replicate,
      labelOrder: r.labelOrder,
    })),
    checkpoints: cpRows.map((r) =>
      checkpointView(
        r,
        today,
        Number(counts.find((c) => c.checkpointId === r.id)?.n ?? 0),
        samplesPerCondition(r.studyConditionId) * attrRows.length,
      ),
    ),
    amendments: amendRows.map(({ a, who }): Amendment => ({
      id: a.id,
      kind: a.kind,
      reason: a.reason,
      details: a.details,
      createdBy: who,
      createdAt: a.createdAt.toISOString(),
    })),
    today,
  };
}

export async function listStudies(db: Db, labId: number, today: string, status?: StudyStatus): Promise<StudySummary[]> {
  const conds = [eq(studies.labId, labId)];
  if (status) conds.push(eq(studies.status, status));
  const rows = await db
    .select({
      id: studies.id,
      title: studies.title,
      status: studies.status,
      startDate: studies.startDate,
      productId: products.id,
      productName: products.name,
      responsibleId: users.id,
      responsibleName: users.name,
      batchCount: sql<number>`(SELECT count(*) FROM ${studyBatches} WHERE ${studyBatches.studyId} = ${studies.id})`,
      conditionCount: sql<number>`(SELECT count(*) FROM ${studyConditions} WHERE ${studyConditions.studyId} = ${studies.id})`,
      sampleCount: sql<number>`(SELECT count(*) FROM ${samples} WHERE ${samples.studyId} = ${studies.id})`,
      nextDue: sql<string | null>`(SELECT min(${checkpoints.dueDate}) FROM ${checkpoints} WHERE ${checkpoints.studyId} = ${studies.id} AND ${checkpoints.status} = 'open')`,
      overdueCount: sql<number>`(SELECT count(*) FROM ${checkpoints} WHERE ${checkpoints.studyId} = ${studies.id} AND ${checkpoints.status} = 'open' AND DATE_ADD(${checkpoints.dueDate}, INTERVAL ${checkpoints.windowAfter} DAY) < ${today})`,
    })
    .from(studies)
    .innerJoin(products, eq(products.id, studies.productId))
    .leftJoin(users, eq(users.id, studies.responsibleId))
    .where(and(...conds))
    .orderBy(sql`FIELD(${studies.status}, 'running', 'in_review', 'draft', 'decided', 'cancelled')`, asc(studies.startDate));
  return rows.map((r) => ({
    id: r.id,
    title: r.title,
    status: r.status,
    startDate: r.startDate,
    product: { id: r.productId, name: r.productName },
    responsible: r.responsibleId ? { id: r.responsibleId, name: r.responsibleName! } : null,
    batchCount: Number(r.batchCount),
    conditionCount: Number(r.conditionCount),
    sampleCount: Number(r.sampleCount),
    nextDue: r.nextDue ? String(r.nextDue).slice(0, 10) : null,
    overdueCount: Number(r.overdueCount),
  }));
}

/**
 * The Bench: open checkpoints of running studies whose window has started or
 * starts within `days`, including overdue ones, grouped by location then condition.
 */
/** The Bench's first query: open checkpoints of running studies whose window opens by `until`. Exported for `npm run bench`. */
export function benchCheckpointsQuery(db: Db, labId: number, until: string) {
  return db
    .select({
      cp: checkpoints,
      studyTitle: studies.title,
      productName: products.name,
      condId: storageConditions.id,
      condName: storageConditions.name,
      condKind: storageConditions.kind,
      setpointC: storageConditions.setpointC,
      location: storageConditions.location,
    })
    .from(checkpoints)
    .innerJoin(studies, eq(studies.id, checkpoints.studyId))
    .innerJoin(products, eq(products.id, studies.productId))
    .innerJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
    .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(
      and(
        eq(checkpoints.labId, labId),
        eq(checkpoints.status, 'open'),
        eq(studies.status, 'running'),
        sql`DATE_SUB(${checkpoints.dueDate}, INTERVAL ${checkpoints.windowBefore} DAY) <= ${until}`,
      ),
    )
    .orderBy(asc(storageConditions.location), asc(storageConditions.name), asc(checkpoints.dueDate));
}

/** The Bench's three follow-up queries (run together): samples, attribute counts, recorded counts. Exported for `npm run bench`. */
export function benchDetailQueries(db: Db, labId: number, scIds: number[], studyIds: number[], cpIds: number[]) {
  return [
    db
      .select({ id: samples.id, code: samples.code, scId: samples.studyConditionId, lotCode: batches.lotCode, variantCode: variants.code, order: samples.labelOrder })
      .from(samples)
      .innerJoin(batches, eq(batches.id, samples.batchId))
      .innerJoin(variants, eq(variants.id, batches.variantId))
      .where(and(eq(samples.labId, labId), inArray(samples.studyConditionId, scIds)))
      .orderBy(asc(samples.labelOrder)),
    db
      .select({ studyId: studyAttributes.studyId, n: sql<number>`count(*)` })
      .from(studyAttributes)
      .where(inArray(studyAttributes.studyId, studyIds))
      .groupBy(studyAttributes.studyId),
    db
      .select({ cpId: observations.checkpointId, sampleId: observations.sampleId, n: sql<number>`count(*)` })
      .from(observations)
      .where(and(inArray(observations.checkpointId, cpIds), eq(observations.voided, false)))
      .groupBy(observations.checkpointId, observations.sampleId),
  ] as const;
}

export async function bench(db: Db, labId: number, today: string, days: number): Promise<BenchResponse> {
  const until = addDays(today, days);
  const cps = await benchCheckpointsQuery(db, labId, until);

  const counts = { overdue: 0, due: 0, upcoming: 0 };
  if (!cps.length) return { today, until, counts, groups: [] };

  const scIds = [...new Set(cps.map((c) => c.cp.studyConditionId))];
  const studyIds = [...new Set(cps.map((c) => c.cp.studyId))];
  const cpIds = cps.map((c) => c.cp.id);
  const [sampleRows, attrCounts, recorded] = await Promise.all(benchDetailQueries(db, labId, scIds, studyIds, cpIds));

  const groups: BenchResponse['groups'] = [];
  for (const c of cps) {
    const state = checkpointState(c.cp.dueDate, c.cp.windowBefore, c.cp.windowAfter, today, false, false);
    if (state === 'overdue' || state === 'due' || state === 'upcoming') counts[state]++;
    const location = c.location || 'No location set';
    let group = groups.find((g) => g.location === location);
    if (!group) groups.push((group = { location, conditions: [] }));
    let cond = group.conditions.find((x) => x.id === c.condId);
    if (!cond) group.conditions.push((cond = { id: c.condId, name: c.condName, kind: c.condKind, setpointC: c.setpointC, checkpoints: [] }));
    const attributeCount = Number(attrCounts.find((a) => a.studyId === c.cp.studyId)?.n ?? 0);
    const mine = sampleRows.filter((s) => s.scId === c.cp.studyConditionId);
    const benchSamples = mine.map((s) => ({
      id: s.id,
      code: s.code,
      lotCode: s.lotCode,
      variantCode: s.variantCode,
      recorded: Number(recorded.find((r) => r.cpId === c.cp.id && r.sampleId === s.id)?.n ?? 0),
    }));
    const done = benchSamples.reduce((sum, s) => sum + s.recorded, 0);
    cond.checkpoints.push({
      id: c.cp.id,
      label: c.cp.label,
      dueDate: c.cp.dueDate,
      windowStart: addDays(c.cp.dueDate, -c.cp.windowBefore),
      windowEnd: addDays(c.cp.dueDate, c.cp.windowAfter),
      state,
      study: { id: c.cp.studyId, title: c.studyTitle, product: c.productName },
      attributeCount,
      toRecord: Math.max(0, benchSamples.length * attributeCount - done),
      samples: benchSamples,
    });
  }
  // Overdue work first within each condition.
  const rank = { overdue: 0, due: 1, upcoming: 2, done: 3, missed: 4 } as const;
  for (const g of groups) for (const c of g.conditions) c.checkpoints.sort((a, b) => rank[a.state] - rank[b.state] || a.dueDate.localeCompare(b.dueDate));
  return { today, until, counts, groups };
}

