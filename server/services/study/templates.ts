/**
 * Whole-study templates: a plan without product, batches or dates, saved from a plan being built or
 * from a study, and the plan drafts a new study starts from (a template, or a copy of a previous study).
 */
import { and, asc, eq, inArray } from 'drizzle-orm';
import { dayZeroAllowed, isDayZero } from '../../../shared/compute/study-calendar';
import type { PlanDraft, PlanDraftResponse, StudyTemplateInput, StudyTemplateSummary, TemplatePlan } from '../../../shared/schemas/templates';
import type { Db, DbOrTx } from '../../db/client';
import { attributes, storageConditions, studies, studyTemplates, users } from '../../db/schema';
import { conflict, notFound } from '../../http/errors';
import { audit } from '../audit';
import { isDuplicateKey } from '../formulas';
import { bad, cycleHoursOf, type Actor } from './common';
import { checkConditionsAndAttributes } from './plan-checks';
import { planOf } from './plan';

const iso = (d: Date | string) => (d instanceof Date ? d : new Date(d)).toISOString();
const DUPLICATE_NAME = 'Your lab already has a template with this name';

/** Checks a template's conditions and attributes against the lab: 400/404 naming the field (plan.conditions.0.conditionId...). */
async function checkTemplatePlan(db: DbOrTx, labId: number, plan: TemplatePlan): Promise<void> {
  const fields: Record<string, string> = {};
  // A template may keep a condition taken out of use: starting a study from it names it then.
  await checkConditionsAndAttributes(db, labId, plan, fields, { prefix: 'plan.', inUseOnly: false });
  if (Object.keys(fields).length) throw bad(fields);
}

/** A study's plan as a template: no product, batches, dates or people; a day 0 kept from before the initial test is dropped. */
async function templateOfStudy(db: DbOrTx, labId: number, studyId: number): Promise<{ plan: TemplatePlan; title: string }> {
  const [s] = await db.select({ id: studies.id, title: studies.title }).from(studies).where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  if (!s) throw notFound('No such study in your lab');
  const p = await planOf(db, studyId);
  const kinds = await db
    .select({ id: storageConditions.id, kind: storageConditions.kind })
    .from(storageConditions)
    .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, p.conditions.map((c) => c.conditionId).concat(0))));
  const conditions = p.conditions
    .map((c) => {
      const kind = kinds.find((k) => k.id === c.conditionId)?.kind;
      return { ...c, offsets: c.offsets.filter((o) => !isDayZero(o) || (kind != null && dayZeroAllowed(kind))) };
    })
    .filter((c) => c.offsets.length > 0);
  return {
    title: s.title,
    plan: {
      conditions,
      attributes: p.attributes,
      samplesPerCell: p.samplesPerCell,
      containerDescription: p.containerDescription,
      fillGrams: p.fillGrams ?? null,
    },
  };
}

export async function listTemplates(db: DbOrTx, labId: number, id?: number): Promise<StudyTemplateSummary[]> {
  const rows = await db
    .select({ t: studyTemplates, createdBy: users.name, sourceTitle: studies.title })
    .from(studyTemplates)
    .leftJoin(users, eq(users.id, studyTemplates.createdBy))
    .leftJoin(studies, eq(studies.id, studyTemplates.sourceStudyId))
    .where(id == null ? eq(studyTemplates.labId, labId) : and(eq(studyTemplates.labId, labId), eq(studyTemplates.id, id)))
    .orderBy(asc(studyTemplates.name));
  const ids = [...new Set(rows.flatMap((r) => r.t.plan.conditions.map((c) => c.conditionId)))];
  const names = ids.length
    ? await db.select({ id: storageConditions.id, name: storageConditions.name }).from(storageConditions).where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, ids)))
    : [];
  return rows.map(({ t, createdBy, sourceTitle }) => ({
    id: t.id,
    name: t.name,
    description: t.description,
    conditions: t.plan.conditions.map((c) => `${names.find((n) => n.id === c.conditionId)?.name ?? 'A removed condition'} (${c.offsets.length})`),
    attributeCount: t.plan.attributes.length,
    samplesPerCell: t.plan.samplesPerCell,
    containerDescription: t.plan.containerDescription,
    source: t.sourceStudyId != null && sourceTitle != null ? { id: t.sourceStudyId, title: sourceTitle } : null,
    createdBy,
    createdAt: iso(t.createdAt),
  }));
}

export async function createTemplate(db: Db, actor: Actor, input: StudyTemplateInput): Promise<StudyTemplateSummary> {
  const id = await db
    .transaction(async (tx) => {
      let plan: TemplatePlan;
      let sourceStudyId: number | null = null;
      if (input.studyId != null) {
        plan = (await templateOfStudy(tx, actor.labId, input.studyId)).plan;
        sourceStudyId = input.studyId;
        if (!plan.conditions.length) throw bad({ studyId: 'This study has no checkpoints to keep in a template' });
      } else {
        plan = input.plan!;
        await checkTemplatePlan(tx, actor.labId, plan);
      }
      const [clash] = await tx
        .select({ id: studyTemplates.id })
        .from(studyTemplates)
        .where(and(eq(studyTemplates.labId, actor.labId), eq(studyTemplates.name, input.name)))
        .limit(1);
      if (clash) throw conflict(DUPLICATE_NAME, { name: DUPLICATE_NAME });
      const values = { name: input.name, description: input.description ?? null, plan, sourceStudyId };
      const [{ id }] = await tx
        .insert(studyTemplates)
        .values({ labId: actor.labId, ...values, createdBy: actor.id })
        .$returningId();
      await audit(tx, { labId: actor.labId, userId: actor.id, action: 'create', entity: 'study_template', entityId: id, newValue: values });
      return id;
    })
    .catch((e) => {
      if (isDuplicateKey(e, 'study_templates_lab_name_uq')) throw conflict(DUPLICATE_NAME, { name: DUPLICATE_NAME });
      throw e;
    });
  return (await listTemplates(db, actor.labId, id))[0];
}

export async function deleteTemplate(db: Db, actor: Actor, id: number): Promise<void> {
  await db.transaction(async (tx) => {
    const [row] = await tx
      .select()
      .from(studyTemplates)
      .where(and(eq(studyTemplates.labId, actor.labId), eq(studyTemplates.id, id)))
      .for('update');
    if (!row) throw notFound('No such template in your lab');
    await tx.delete(studyTemplates).where(eq(studyTemplates.id, id));
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: 'delete',
      entity: 'study_template',
      entityId: id,
      oldValue: { name: row.name, description: row.description, plan: row.plan, sourceStudyId: row.sourceStudyId },
    });
  });
}

/**
 * A plan to start from, fitted to what the lab can use now: a storage condition or attribute no
 * longer in use is left out (and named); a cycle checkpoint of a condition that no longer cycles and
 * a day 0 outside a centrifuge test are dropped.
 */
async function fitDraft(db: DbOrTx, labId: number, plan: TemplatePlan, extra: Pick<PlanDraft, 'productId' | 'notes'>): Promise<{ draft: PlanDraft; leftOut: string[] }> {
  const leftOut: string[] = [];
  const conditionRows = await db
    .select()
    .from(storageConditions)
    .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, plan.conditions.map((c) => c.conditionId).concat(0))));
  const conditions: PlanDraft['conditions'] = [];
  for (const pc of plan.conditions) {
    const row = conditionRows.find((c) => c.id === pc.conditionId);
    if (!row || !row.active) {
      leftOut.push(row ? `${row.name}: the storage condition is no longer in use` : 'A storage condition that no longer exists');
      continue;
    }
    const offsets = pc.offsets.filter((o) => (o.unit !== 'cycle' || cycleHoursOf(row) != null) && (!isDayZero(o) || dayZeroAllowed(row.kind)));
    if (offsets.length < pc.offsets.length) leftOut.push(`${row.name}: ${pc.offsets.length - offsets.length} checkpoint(s) that no longer fit the condition`);
    if (!offsets.length) continue;
    conditions.push({ ...pc, offsets });
  }
  const attributeRows = await db
    .select()
    .from(attributes)
    .where(and(eq(attributes.labId, labId), inArray(attributes.id, plan.attributes.map((a) => a.attributeId).concat(0))));
  const attrs: PlanDraft['attributes'] = [];
  for (const pa of plan.attributes) {
    const row = attributeRows.find((a) => a.id === pa.attributeId);
    if (!row || !row.active) {
      leftOut.push(row ? `${row.name}: the attribute is no longer in use` : 'An attribute that no longer exists');
      continue;
    }
    attrs.push({ attributeId: pa.attributeId, criterion: pa.criterion });
  }
  return {
    draft: {
      productId: extra.productId,
      conditions,
      attributes: attrs,
      samplesPerCell: plan.samplesPerCell,
      containerDescription: plan.containerDescription,
      fillGrams: plan.fillGrams ?? null,
      notes: extra.notes,
    },
    leftOut,
  };
}

export async function draftFromTemplate(db: DbOrTx, labId: number, id: number): Promise<PlanDraftResponse> {
  const [t] = await db.select().from(studyTemplates).where(and(eq(studyTemplates.labId, labId), eq(studyTemplates.id, id)));
  if (!t) throw notFound('No such template in your lab');
  const fitted = await fitDraft(db, labId, t.plan, { productId: null, notes: null });
  return { ...fitted, from: { kind: 'template', id: t.id, name: t.name } };
}

/** A previous study's plan for a new study of the same product: no batches, dates, people or title. */
export async function draftFromStudy(db: DbOrTx, labId: number, studyId: number): Promise<PlanDraftResponse> {
  const { plan, title } = await templateOfStudy(db, labId, studyId);
  const [s] = await db.select({ productId: studies.productId, notes: studies.notes }).from(studies).where(eq(studies.id, studyId));
  const fitted = await fitDraft(db, labId, plan, { productId: s.productId, notes: s.notes });
  return { ...fitted, from: { kind: 'study', id: studyId, name: title } };
}

