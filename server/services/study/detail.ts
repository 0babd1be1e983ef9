/** Read models of a study: its page (plan, samples, checkpoints, amendments, investigations) and the studies list. */
import { and, asc, eq, sql } from 'drizzle-orm';
import { addDays, checkpointState, type Offset } from '../../../shared/compute/schedule';
import type { StudyStatus } from '../../../shared/domain';
import type { Amendment, StudyCheckpoint, StudyDetail, StudySummary } from '../../../shared/schemas/studies';
import type { Db } from '../../db/client';
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
} from '../../db/schema';
import { notFound } from '../../http/errors';
import { investigationsOf, openCounts } from '../oos';
import { cycleHoursOf } from './common';
import { responsiblesOf } from './responsibles';

export function checkpointView(row: typeof checkpoints.$inferSelect, today: string, recorded: number, expected: number): StudyCheckpoint {
  const state =
    row.status === 'cancelled'
      ? 'cancelled'
      : checkpointState(row.dueDate, row.windowBefore, row.windowAfter, today, row.status === 'done', row.status === 'missed');
  return {
    id: row.id,
    studyConditionId: row.studyConditionId,
    kind: row.kind,
    controlCheckpointId: row.controlCheckpointId,
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
  const [batchRows, condRows, attrRows, sampleRows, cpRows, amendRows, counts, holders, investigations, people] = await Promise.all([
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
    db.select().from(samples).where(and(eq(samples.labId, labId), eq(samples.studyId, studyId))).orderBy(asc(samples.labelOrder)),
    db.select().from(checkpoints).where(and(eq(checkpoints.labId, labId), eq(checkpoints.studyId, studyId))).orderBy(asc(checkpoints.dueDate), asc(checkpoints.id)),
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
    // Condition samples holding readings of the initial test (studies recorded before it existed).
    db
      .selectDistinct({ checkpointId: observations.checkpointId, sampleId: observations.sampleId })
      .from(observations)
      .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
      .where(and(eq(observations.labId, labId), eq(observations.studyId, studyId), eq(checkpoints.kind, 'initial'))),
    investigationsOf(db, labId, { studyId }),
    responsiblesOf(db, labId, [studyId]),
  ]);
  const samplesAt = (cp: (typeof cpRows)[number]) => {
    if (cp.kind !== 'initial') return sampleRows.filter((s) => s.studyConditionId === cp.studyConditionId).length;
    const ids = new Set([...sampleRows.filter((s) => s.studyConditionId == null).map((s) => s.id), ...holders.filter((h) => h.checkpointId === cp.id).map((h) => h.sampleId)]);
    return ids.size;
  };
  const s = row.s;
  return {
    id: s.id,
    title: s.title,
    status: s.status,
    startDate: s.startDate,
    product: row.p,
    responsible: row.r?.id ? { id: row.r.id, name: row.r.name } : null,
    responsibles: people.get(s.id) ?? [],
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
      pairControl: sc.pairControl,
      pairingOffReason: sc.pairingOffReason,
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
    checkpoints: cpRows.map((r) => checkpointView(r, today, Number(counts.find((c) => c.checkpointId === r.id)?.n ?? 0), samplesAt(r) * attrRows.length)),
    amendments: amendRows.map(({ a, who }): Amendment => ({
      id: a.id,
      kind: a.kind,
      reason: a.reason,
      details: a.details,
      createdBy: who,
      createdAt: a.createdAt.toISOString(),
    })),
    investigations,
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
      // Only a running study has work that can be overdue.
      overdueCount: sql<number>`(SELECT count(*) FROM ${checkpoints} WHERE ${checkpoints.studyId} = ${studies.id} AND ${studies.status} = 'running' AND ${checkpoints.status} = 'open' AND DATE_ADD(${checkpoints.dueDate}, INTERVAL ${checkpoints.windowAfter} DAY) < ${today})`,
    })
    .from(studies)
    .innerJoin(products, eq(products.id, studies.productId))
    .leftJoin(users, eq(users.id, studies.responsibleId))
    .where(and(...conds))
    .orderBy(sql`FIELD(${studies.status}, 'running', 'in_review', 'draft', 'decided', 'cancelled')`, asc(studies.startDate));
  const [oos, people] = await Promise.all([openCounts(db, labId, rows.map((r) => r.id)), responsiblesOf(db, labId, rows.map((r) => r.id))]);
  return rows.map((r) => ({
    id: r.id,
    title: r.title,
    status: r.status,
    startDate: r.startDate,
    product: { id: r.productId, name: r.productName },
    responsible: r.responsibleId ? { id: r.responsibleId, name: r.responsibleName! } : null,
    responsibles: people.get(r.id) ?? [],
    batchCount: Number(r.batchCount),
    conditionCount: Number(r.conditionCount),
    sampleCount: Number(r.sampleCount),
    nextDue: r.nextDue ? String(r.nextDue).slice(0, 10) : null,
    overdueCount: Number(r.overdueCount),
    openInvestigations: oos.get(r.id)?.open ?? 0,
    unconfirmed: oos.get(r.id)?.unconfirmed ?? 0,
  }));
}


/** Whether the study is one of the lab's (for routes that list a study's things: another lab's id is not found). */
export async function studyExists(db: Db, labId: number, studyId: number): Promise<boolean> {
  const [row] = await db.select({ id: studies.id }).from(studies).where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  return Boolean(row);
}
