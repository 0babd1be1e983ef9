/**
 * Out-of-specification (OOS) results. A saved reading that fails its criterion opens an
 * investigation in the same transaction and tells the study's formulator. At the bench the
 * technician re-measures (a second reading, kept beside the first) or confirms the result with a
 * comment; until then it is "unconfirmed". A formulator or owner closes the investigation with what
 * was checked (instrument, method, sample, calculation) and a conclusion: confirmed, or invalidated
 * as a lab error with the reason and a valid re-test. Invalidating never deletes: the observation is
 * corrected to the re-test and the original kept as a revision and in the audit trail.
 * Open investigations block submitting the study for review.
 */
import { and, desc, eq, inArray, isNull, or, sql } from 'drizzle-orm';
import { alias } from 'drizzle-orm/mysql-core';
import type { StoredVerdict } from '../../shared/domain';
import type { CloseInvestigationInput, Investigation, Notification, RemeasureInput } from '../../shared/schemas/oos';
import type { Db, DbOrTx } from '../db/client';
import {
  attributes,
  batches,
  checkpoints,
  notifications,
  observations,
  oosInvestigations,
  samples,
  storageConditions,
  studies,
  studyAttributes,
  studyConditions,
  users,
  variants,
} from '../db/schema';
import { conflict, forbidden, HttpError, notFound } from '../http/errors';
import { audit } from './audit';
import { keepRevision } from './recording/corrections';
import { baselineFor, columnsFor, evaluateFor, valueOf, type Value } from './recording/values';

type Role = 'technician' | 'formulator' | 'owner';
export interface OosActor {
  id: number;
  labId: number;
  role: Role;
}

const unprocessable = (fields: Record<string, string>) => new HttpError(422, 'unprocessable', Object.values(fields)[0] ?? 'Check the values', fields);

/** Opens one investigation per failing reading just saved (inside the saving transaction) and tells the study's formulators. */
export async function openInvestigations(
  tx: DbOrTx,
  who: { id: number; labId: number },
  study: { id: number; title: string; createdBy: number | null; responsibleId: number | null },
  failing: { observationId: number; sampleId: number; sampleCode: string; checkpointId: number; checkpointLabel: string; studyAttributeId: number; attributeName: string; value: Value; message: string }[],
): Promise<void> {
  if (!failing.length) return;
  for (const f of failing) {
    const [{ id }] = await tx
      .insert(oosInvestigations)
      .values({
        labId: who.labId,
        studyId: study.id,
        observationId: f.observationId,
        sampleId: f.sampleId,
        checkpointId: f.checkpointId,
        studyAttributeId: f.studyAttributeId,
        failedValue: f.value,
        failedMessage: f.message.slice(0, 500),
        openedBy: who.id,
      })
      .$returningId();
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'create',
      entity: 'oos_investigation',
      entityId: id,
      studyId: study.id,
      newValue: { observationId: f.observationId, sample: f.sampleCode, checkpoint: f.checkpointLabel, attribute: f.attributeName, value: f.value, message: f.message },
      reason: 'Out-of-specification result saved',
    });
  }
  // The formulators who own the study: whoever planned it, and the person responsible if a formulator or owner.
  const owners = await tx
    .select({ id: users.id })
    .from(users)
    .where(
      and(
        eq(users.labId, who.labId),
        eq(users.active, true),
        inArray(users.role, ['formulator', 'owner']),
        or(eq(users.id, study.createdBy ?? 0), eq(users.id, study.responsibleId ?? 0)),
      ),
    );
  const text =
    failing.length === 1
      ? `Out of specification in ${study.title}: ${failing[0].sampleCode} ${failing[0].checkpointLabel}, ${failing[0].message}`
      : `${failing.length} out-of-specification results in ${study.title} (${failing[0].sampleCode} ${failing[0].checkpointLabel})`;
  if (owners.length) {
    await tx.insert(notifications).values(
      owners.map((o) => ({ labId: who.labId, userId: o.id, kind: 'oos', text: text.slice(0, 500), link: `/studies/${study.id}?tab=investigations`, studyId: study.id })),
    );
  }
}

const opener = alias(users, 'opener');
const remeasurer = alias(users, 'remeasurer');
const confirmer = alias(users, 'confirmer');
const closer = alias(users, 'closer');

/** Investigations of a study (or one), newest first, with what the screens show. */
export async function investigationsOf(db: DbOrTx, labId: number, where: { studyId?: number; id?: number; openOnly?: boolean }): Promise<Investigation[]> {
  const conds = [eq(oosInvestigations.labId, labId)];
  if (where.studyId) conds.push(eq(oosInvestigations.studyId, where.studyId));
  if (where.id) conds.push(eq(oosInvestigations.id, where.id));
  if (where.openOnly) conds.push(eq(oosInvestigations.status, 'open'));
  const rows = await db
    .select({
      i: oosInvestigations,
      study: { id: studies.id, title: studies.title },
      code: samples.code,
      cp: { id: checkpoints.id, label: checkpoints.label },
      condition: storageConditions.name,
      attr: { id: studyAttributes.id, name: attributes.name, unit: attributes.unit, decimals: attributes.decimals, kind: attributes.kind, scale: attributes.scale },
      variant: variants.code,
      lot: batches.lotCode,
      openedBy: opener.name,
      remeasuredBy: remeasurer.name,
      confirmedBy: confirmer.name,
      closedBy: closer.name,
      current: { valueNum: observations.valueNum, valueText: observations.valueText, valueBool: observations.valueBool },
    })
    .from(oosInvestigations)
    .innerJoin(studies, eq(studies.id, oosInvestigations.studyId))
    .innerJoin(samples, eq(samples.id, oosInvestigations.sampleId))
    .innerJoin(checkpoints, eq(checkpoints.id, oosInvestigations.checkpointId))
    .leftJoin(studyConditions, eq(studyConditions.id, samples.studyConditionId))
    .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .innerJoin(studyAttributes, eq(studyAttributes.id, oosInvestigations.studyAttributeId))
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .innerJoin(observations, eq(observations.id, oosInvestigations.observationId))
    .innerJoin(opener, eq(opener.id, oosInvestigations.openedBy))
    .leftJoin(remeasurer, eq(remeasurer.id, oosInvestigations.remeasuredBy))
    .leftJoin(confirmer, eq(confirmer.id, oosInvestigations.confirmedBy))
    .leftJoin(closer, eq(closer.id, oosInvestigations.closedBy))
    .where(and(...conds))
    .orderBy(desc(oosInvestigations.openedAt), desc(oosInvestigations.id));
  return rows.map((r) => {
    const i = r.i;
    return {
      id: i.id,
      status: i.status,
      benchStep: i.benchStep,
      study: r.study,
      sampleCode: r.code,
      checkpoint: r.cp,
      condition: r.condition ?? null,
      attribute: { id: r.attr.id, name: r.attr.name, kind: r.attr.kind, unit: r.attr.unit, decimals: r.attr.decimals, scale: r.attr.scale ?? null },
      variant: r.variant,
      lotCode: r.lot,
      failed: { value: i.failedValue, message: i.failedMessage, by: r.openedBy, at: i.openedAt.toISOString() },
      remeasure:
        i.remeasureValue != null && i.remeasuredAt
          ? { value: i.remeasureValue, verdict: i.remeasureVerdict as StoredVerdict, by: r.remeasuredBy ?? '', at: i.remeasuredAt.toISOString() }
          : null,
      benchComment: i.benchComment,
      confirmed: i.confirmedAt ? { by: r.confirmedBy ?? '', at: i.confirmedAt.toISOString() } : null,
      checks: i.checks ?? null,
      conclusion: i.conclusion,
      reason: i.conclusionReason,
      retest: i.retestValue != null ? { value: i.retestValue, verdict: i.retestVerdict as StoredVerdict } : null,
      closed: i.closedAt ? { by: r.closedBy ?? '', at: i.closedAt.toISOString() } : null,
      valueUsed: (valueOf(r.attr.kind, r.current) ?? i.failedValue) as Value,
    };
  });
}

/** Counts for lists and the Bench: open investigations, and of them the results not yet re-measured or confirmed. */
export async function openCounts(db: DbOrTx, labId: number, studyIds: number[]): Promise<Map<number, { open: number; unconfirmed: number }>> {
  const out = new Map<number, { open: number; unconfirmed: number }>();
  if (!studyIds.length) return out;
  const rows = await db
    .select({
      studyId: oosInvestigations.studyId,
      open: sql<number>`count(*)`,
      unconfirmed: sql<number>`sum(${oosInvestigations.benchStep} = 'unconfirmed')`,
    })
    .from(oosInvestigations)
    .where(and(eq(oosInvestigations.labId, labId), inArray(oosInvestigations.studyId, studyIds), eq(oosInvestigations.status, 'open')))
    .groupBy(oosInvestigations.studyId);
  for (const r of rows) out.set(r.studyId, { open: Number(r.open), unconfirmed: Number(r.unconfirmed ?? 0) });
  return out;
}

async function lockedInvestigation(tx: DbOrTx, who: OosActor, id: number) {
  const [row] = await tx
    .select({ i: oosInvestigations, o: observations, sa: studyAttributes, a: attributes, study: studies, sample: samples, cp: checkpoints })
    .from(oosInvestigations)
    .innerJoin(observations, eq(observations.id, oosInvestigations.observationId))
    .innerJoin(studyAttributes, eq(studyAttributes.id, oosInvestigations.studyAttributeId))
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .innerJoin(studies, eq(studies.id, oosInvestigations.studyId))
    .innerJoin(samples, eq(samples.id, oosInvestigations.sampleId))
    .innerJoin(checkpoints, eq(checkpoints.id, oosInvestigations.checkpointId))
    .where(and(eq(oosInvestigations.labId, who.labId), eq(oosInvestigations.id, id)))
    .for('update');
  if (!row) throw notFound('No such investigation in your lab');
  return row;
}

/** A second reading of the same sample at the bench, kept beside the first (the first stays the result until the investigation says otherwise). */
export async function remeasure(db: Db, who: OosActor, id: number, input: RemeasureInput): Promise<void> {
  await db.transaction(async (tx) => {
    const row = await lockedInvestigation(tx, who, id);
    if (row.i.status !== 'open') throw conflict('This investigation is closed');
    if (row.i.remeasuredAt) throw conflict('Already re-measured; a further reading belongs in the investigation', { value: 'Already re-measured' });
    if (row.study.status !== 'running') throw conflict(`The study is ${row.study.status.replace('_', ' ')}`);
    const cols = columnsFor(row.a, input.value);
    if (typeof cols === 'string') throw unprocessable({ value: cols });
    const baseline = await baselineFor(tx, row.study, row.sample, row.cp, row.sa.id, row.a.kind, input.value);
    const ev = evaluateFor(row.a, row.sa.criterion, input.value, baseline);
    const t = new Date();
    await tx
      .update(oosInvestigations)
      .set({
        benchStep: row.i.benchStep === 'confirmed' ? 'confirmed' : 'remeasured',
        remeasureValue: input.value,
        remeasureMethod: input.method ?? null,
        remeasureVerdict: ev.verdict,
        remeasuredBy: who.id,
        remeasuredAt: t,
        benchComment: input.comment ? joinComment(row.i.benchComment, input.comment) : row.i.benchComment,
      })
      .where(eq(oosInvestigations.id, id));
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'remeasure',
      entity: 'oos_investigation',
      entityId: id,
      studyId: row.study.id,
      oldValue: { value: valueOf(row.a.kind, row.o), verdict: row.o.verdict },
      newValue: { remeasured: input.value, verdict: ev.verdict, method: input.method, sample: row.sample.code, checkpoint: row.cp.label, attribute: row.a.code },
      reason: input.comment ?? 'Re-measured at the bench after an out-of-specification result',
    });
  });
}

function joinComment(before: string | null, add: string): string {
  return before ? `${before}\n${add}` : add;
}

/** The technician stands by the result, with a comment on what they checked. */
export async function confirmAtBench(db: Db, who: OosActor, id: number, comment: string): Promise<void> {
  await db.transaction(async (tx) => {
    const row = await lockedInvestigation(tx, who, id);
    if (row.i.status !== 'open') throw conflict('This investigation is closed');
    if (row.i.confirmedAt) throw conflict('Already confirmed');
    await tx
      .update(oosInvestigations)
      .set({ benchStep: 'confirmed', benchComment: joinComment(row.i.benchComment, comment), confirmedBy: who.id, confirmedAt: new Date() })
      .where(eq(oosInvestigations.id, id));
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'confirm',
      entity: 'oos_investigation',
      entityId: id,
      studyId: row.study.id,
      newValue: { benchStep: 'confirmed', sample: row.sample.code, checkpoint: row.cp.label, attribute: row.a.code },
      reason: comment,
    });
  });
}

/**
 * Closes an investigation (formulators and owners). Invalidated: the observation is corrected to the
 * valid re-test, its original kept as an 'invalidated' revision, so the analysis uses the re-test.
 */
export async function closeInvestigation(db: Db, who: OosActor, id: number, input: CloseInvestigationInput): Promise<void> {
  if (who.role === 'technician') throw forbidden('Only a formulator or owner closes an investigation');
  await db.transaction(async (tx) => {
    const row = await lockedInvestigation(tx, who, id);
    if (row.i.status !== 'open') throw conflict('This investigation is already closed');
    if (row.study.status === 'decided' || row.study.status === 'cancelled') throw conflict(`The study is ${row.study.status}`);
    const t = new Date();
    let retest: { value: Value; verdict: StoredVerdict } | null = null;
    if (input.conclusion === 'invalidated') {
      const cols = columnsFor(row.a, input.retest!.value);
      if (typeof cols === 'string') throw unprocessable({ 'retest.value': cols });
      const baseline = await baselineFor(tx, row.study, row.sample, row.cp, row.sa.id, row.a.kind, input.retest!.value);
      const ev = evaluateFor(row.a, row.sa.criterion, input.retest!.value, baseline);
      retest = { value: input.retest!.value, verdict: ev.verdict };
      const o = row.o;
      await keepRevision(tx, o, 'invalidated', who, `Invalidated as a lab error (investigation ${id}): ${input.reason}`);
      await tx
        .update(observations)
        .set({ ...cols, method: input.retest!.method ?? o.method, verdict: ev.verdict, recordedBy: who.id, recordedAt: t, version: o.version + 1 })
        .where(eq(observations.id, o.id));
      await audit(tx, {
        labId: who.labId,
        userId: who.id,
        action: 'update',
        entity: 'observation',
        entityId: o.id,
        studyId: row.study.id,
        oldValue: { value: valueOf(row.a.kind, o), verdict: o.verdict, version: o.version },
        newValue: { value: input.retest!.value, verdict: ev.verdict, version: o.version + 1, sample: row.sample.code, checkpoint: row.cp.label, attribute: row.a.code, retestOfInvestigation: id },
        reason: `Out-of-specification result invalidated as a lab error; valid re-test used: ${input.reason}`,
      });
    }
    await tx
      .update(oosInvestigations)
      .set({
        status: 'closed',
        checks: input.checks,
        conclusion: input.conclusion,
        conclusionReason: input.reason,
        retestValue: retest?.value ?? null,
        retestVerdict: retest?.verdict ?? null,
        closedBy: who.id,
        closedAt: t,
      })
      .where(eq(oosInvestigations.id, id));
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'close',
      entity: 'oos_investigation',
      entityId: id,
      studyId: row.study.id,
      oldValue: { status: 'open', benchStep: row.i.benchStep },
      newValue: { status: 'closed', conclusion: input.conclusion, checks: input.checks, retest },
      reason: input.reason,
    });
  });
}

// ---------------------------------------------------------------- notifications

export async function notificationsFor(db: DbOrTx, who: { id: number; labId: number }, limit = 30): Promise<{ unread: number; items: Notification[] }> {
  const rows = await db
    .select()
    .from(notifications)
    .where(and(eq(notifications.labId, who.labId), eq(notifications.userId, who.id)))
    .orderBy(desc(notifications.createdAt), desc(notifications.id))
    .limit(limit);
  const [{ n }] = await db
    .select({ n: sql<number>`count(*)` })
    .from(notifications)
    .where(and(eq(notifications.labId, who.labId), eq(notifications.userId, who.id), isNull(notifications.readAt)));
  return {
    unread: Number(n),
    items: rows.map((r) => ({ id: r.id, kind: r.kind, text: r.text, link: r.link, createdAt: r.createdAt.toISOString(), read: r.readAt != null })),
  };
}

export async function markNotificationsRead(db: DbOrTx, who: { id: number; labId: number }, ids: number[] | 'all'): Promise<void> {
  const conds = [eq(notifications.labId, who.labId), eq(notifications.userId, who.id), isNull(notifications.readAt)];
  if (ids !== 'all') conds.push(inArray(notifications.id, ids.length ? ids : [0]));
  await db.update(notifications).set({ readAt: new Date() }).where(and(...conds));
}

/** Investigations opened since `since` in studies a formulator owns (for the morning digest). */
export async function newInvestigationsFor(db: DbOrTx, who: { id: number; labId: number }, since: Date): Promise<Investigation[]> {
  const mine = await db
    .select({ id: studies.id })
    .from(studies)
    .where(and(eq(studies.labId, who.labId), or(eq(studies.createdBy, who.id), eq(studies.responsibleId, who.id))));
  if (!mine.length) return [];
  const all = await Promise.all(mine.map((s) => investigationsOf(db, who.labId, { studyId: s.id })));
  return all.flat().filter((i) => i.status === 'open' || new Date(i.failed.at) >= since).sort((a, b) => a.failed.at.localeCompare(b.failed.at));
}

