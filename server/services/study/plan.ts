/** Study plans: checks against the lab's data, the preview (calendar, readings, warnings), saving a draft. */
import { and, asc, eq, inArray } from 'drizzle-orm';
import { pullGapWarnings, readingCounts, studyCalendar, type ControlPull } from '../../../shared/compute/study-calendar';
import { addDays } from '../../../shared/compute/schedule';
import type { ConditionKind } from '../../../shared/domain';
import { cautionLines } from '../../../shared/storage-presets';
import type { PlanPreview, StudyPlanInput } from '../../../shared/schemas/studies';
import type { Db, DbOrTx } from '../../db/client';
import { attributes, batches, products, storageConditions, studies, studyAttributes, studyBatches, studyConditions, users, variants } from '../../db/schema';
import { conflict, HttpError, notFound } from '../../http/errors';
import { audit } from '../audit';
import { bad, cycleHoursOf, type Actor } from './common';
import { checkConditionsAndAttributes, firstRepeat } from './plan-checks';
import { responsibleList, responsiblesOf, setResponsibles } from './responsibles';

export interface CheckedPlan {
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
  if (firstRepeat(plan.batchIds) >= 0) fields[`batchIds.${firstRepeat(plan.batchIds)}`] = 'Listed twice';

  const { conditionRows, attributeRows } = await checkConditionsAndAttributes(db, labId, plan, fields, { prefix: '', inUseOnly: true });

  const people = responsibleList(plan);
  if (people.length) {
    const found = await db
      .select({ id: users.id })
      .from(users)
      .where(and(eq(users.labId, labId), inArray(users.id, people), eq(users.active, true)));
    if (plan.responsibleId != null && !found.some((w) => w.id === plan.responsibleId)) fields.responsibleId = 'No such active member in your lab';
    (plan.responsibleIds ?? []).forEach((rid, i) => {
      if (!found.some((w) => w.id === rid)) fields[`responsibleIds.${i}`] = 'No such active member in your lab';
    });
  }

  if (Object.keys(fields).length) throw bad(fields);
  return { product, conditionRows, attributeRows };
}

/** The calendar of a checked plan: initial test, pulls paired with same-day control readings (shared/compute/study-calendar.ts). */
export function planCalendar(plan: StudyPlanInput, checked: CheckedPlan) {
  return studyCalendar(
    plan.startDate,
    plan.conditions.map((pc, i) => {
      const row = checked.conditionRows.find((c) => c.id === pc.conditionId)!;
      return {
        key: i,
        name: row.name,
        role: pc.role,
        kind: row.kind,
        offsets: pc.offsets,
        cycleHours: cycleHoursOf(row) ?? undefined,
        pairControl: pc.pairControl,
        pairingOffReason: pc.pairingOffReason ?? null,
      };
    }),
  );
}

export function previewPlan(plan: StudyPlanInput, checked: CheckedPlan): PlanPreview {
  const calendar = planCalendar(plan, checked);
  const warnings: string[] = [];
  const rowOf = (i: number) => checked.conditionRows.find((c) => c.id === plan.conditions[i].conditionId)!;
  const perCondition = calendar.conditions.map((c) => {
    const row = rowOf(c.key);
    const weekend = c.pulls.filter((s) => s.warnings.includes('weekend'));
    if (weekend.length) {
      warnings.push(`${row.name}: ${weekend.map((s) => `${s.label} (${s.dueDate})`).join(', ')} fall on a weekend; the window allows moving the check to a weekday.`);
    }
    return {
      conditionId: row.id,
      name: row.name,
      checkpoints: c.pulls.map((s) => ({
        label: s.label,
        dueDate: s.dueDate,
        windowStart: s.windowStart,
        windowEnd: s.windowEnd,
        warnings: s.warnings,
        ...('serves' in s
          ? { serves: (s as ControlPull).serves.map((x) => `${x.name} ${x.label}`), added: (s as ControlPull).added }
          : { controlDate: s.controlDate }),
      })),
    };
  });
  warnings.push(...calendar.warnings);
  warnings.push(...pullGapWarnings(plan.conditions.map((pc, i) => ({ name: rowOf(i).name, offsets: pc.offsets, cycleHours: cycleHoursOf(rowOf(i)) ?? undefined }))));
  const hasControl = calendar.controlKey != null || plan.conditions.some((pc) => checked.conditionRows.find((c) => c.id === pc.conditionId)?.isControl);
  const compared = checked.attributeRows.filter((a) => a.kind === 'compared');
  if (!hasControl && compared.length) warnings.push(`${compared.map((a) => a.name).join(', ')} compare with a control that this plan does not have.`);
  const kinds = new Map<number, ConditionKind>(plan.conditions.map((_, i) => [i, rowOf(i).kind]));
  const readings = readingCounts(calendar, kinds, plan.batchIds.length, plan.samplesPerCell, plan.attributes.length);
  // Containers: one set per condition and batch, plus the batch's retained samples for the initial test.
  const sampleCount = plan.batchIds.length * (plan.conditions.length + 1) * plan.samplesPerCell;
  return {
    sampleCount,
    containerCount: sampleCount,
    gramsPerBatch: plan.fillGrams ? Math.round((plan.conditions.length + 1) * plan.samplesPerCell * plan.fillGrams * 100) / 100 : null,
    initial: {
      label: calendar.initial.label,
      dueDate: calendar.initial.dueDate,
      windowEnd: addDays(calendar.initial.dueDate, calendar.initial.windowAfter),
      samples: plan.batchIds.length * plan.samplesPerCell,
    },
    readings,
    perCondition,
    warnings,
    cautions: cautionLines(plan.conditions.map((pc) => checked.conditionRows.find((c) => c.id === pc.conditionId)!)),
  };
}

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
      // The whole list of people in the audit row; planOf leaves it out (a signature's hash reads planOf).
      old = { ...(await planOf(tx, id)), responsibleIds: (await responsiblesOf(tx, actor.labId, [id])).get(id)?.map((p) => p.id) ?? [] };
      await tx.update(studies).set(studyColumns(plan)).where(eq(studies.id, id));
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
    await setResponsibles(tx, actor.labId, id!, responsibleList(plan));
    await tx.insert(studyConditions).values(
      plan.conditions.map((pc, position) => ({
        labId: actor.labId,
        studyId: id!,
        conditionId: pc.conditionId,
        role: pc.role,
        position,
        offsets: pc.offsets,
        template: pc.template ?? null,
        pairControl: pc.pairControl,
        pairingOffReason: pc.pairControl ? null : (pc.pairingOffReason ?? null),
      })),
    );
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
    responsibleId: responsibleList(plan)[0] ?? null,
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
    conditions: c.map((r) => ({
      conditionId: r.conditionId,
      role: r.role,
      template: r.template,
      offsets: r.offsets,
      pairControl: r.pairControl,
      pairingOffReason: r.pairingOffReason,
    })),
    attributes: a.map((r) => ({ attributeId: r.attributeId, criterion: r.criterion })),
    samplesPerCell: s.samplesPerCell,
    containerDescription: s.containerDescription,
    fillGrams: s.fillGrams,
    responsibleId: s.responsibleId,
    notes: s.notes,
  };
}
