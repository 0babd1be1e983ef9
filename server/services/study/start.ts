/**
 * Starting a study: the samples (each batch's retained samples for the initial test, then one set per
 * condition and batch) and the dated checkpoints (the initial test, every condition's pulls, and the
 * control readings each pull is paired with), in one transaction.
 */
import { randomInt } from 'node:crypto';
import { and, asc, eq, inArray } from 'drizzle-orm';
import type { ControlPull } from '../../../shared/compute/study-calendar';
import type { Db, DbOrTx } from '../../db/client';
import { batches, checkpoints, samples, studies, studyConditions, variants } from '../../db/schema';
import { conflict, notFound } from '../../http/errors';
import { audit } from '../audit';
import type { Actor } from './common';
import { checkPlan, planCalendar, planOf } from './plan';

/** Crockford-style alphabet without 0/O, 1/I/L and U: easy to read off a label. */
const CODE_ALPHABET = '23456789ABCDEFGHJKMNPQRSTVWXYZ';
export function newSampleCode(): string {
  let s = '';
  for (let i = 0; i < 6; i++) s += CODE_ALPHABET[randomInt(CODE_ALPHABET.length)];
  return s;
}

/** `needed` sample codes not yet used in the lab. */
export async function freshSampleCodes(tx: DbOrTx, labId: number, needed: number): Promise<string[]> {
  const codes = new Set<string>();
  while (codes.size < needed) {
    const batch = Array.from({ length: needed - codes.size }, newSampleCode).filter((c) => !codes.has(c));
    const taken = await tx.select({ code: samples.code }).from(samples).where(and(eq(samples.labId, labId), inArray(samples.code, batch)));
    for (const c of batch) if (!taken.some((t) => t.code === c)) codes.add(c);
  }
  return [...codes];
}

export interface Materialized {
  initialId: number;
  samples: { id: number; code: string; batchId: number; studyConditionId: number | null; replicate: number }[];
  checkpoints: { id: number; studyConditionId: number | null; kind: 'initial' | 'pull'; label: string; dueDate: string; offset: { unit: string; n: number }; controlCheckpointId: number | null }[];
}

/**
 * Writes a study's samples and checkpoints from its stored plan (the study row must be locked by the
 * caller). Used by `startStudy` and by the demo, so both build studies the same way.
 */
export async function materializeStudy(
  tx: DbOrTx,
  labId: number,
  study: { id: number; startDate: string; samplesPerCell: number },
): Promise<Materialized> {
  const plan = await planOf(tx, study.id);
  const checked = await checkPlan(tx, labId, plan);
  const calendar = planCalendar(plan, checked);
  const conditionRows = await tx.select().from(studyConditions).where(eq(studyConditions.studyId, study.id)).orderBy(asc(studyConditions.position));
  const batchRows = await tx
    .select({ id: batches.id })
    .from(batches)
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .where(inArray(batches.id, plan.batchIds))
    .orderBy(asc(variants.code), asc(batches.lotCode));

  // Samples: retained samples first (the initial test), then each condition's, batch by batch.
  const spc = study.samplesPerCell;
  const codes = await freshSampleCodes(tx, labId, (conditionRows.length + 1) * batchRows.length * spc);
  const sampleValues: (typeof samples.$inferInsert)[] = [];
  for (const scId of [null, ...conditionRows.map((c) => c.id)]) {
    for (const b of batchRows) {
      for (let r = 1; r <= spc; r++) {
        const order = sampleValues.length;
        sampleValues.push({ labId, studyId: study.id, batchId: b.id, studyConditionId: scId, code: codes[order], replicate: r, labelOrder: order + 1 });
      }
    }
  }
  await tx.insert(samples).values(sampleValues);
  const sampleRows = await tx
    .select({ id: samples.id, code: samples.code, batchId: samples.batchId, studyConditionId: samples.studyConditionId, replicate: samples.replicate })
    .from(samples)
    .where(and(eq(samples.labId, labId), eq(samples.studyId, study.id)))
    .orderBy(asc(samples.labelOrder));

  // Checkpoints whose ids pulls point at (the initial test and the control's readings) go in one by one.
  const out: Materialized['checkpoints'] = [];
  const [{ id: initialId }] = await tx
    .insert(checkpoints)
    .values({
      labId,
      studyId: study.id,
      studyConditionId: null,
      kind: 'initial',
      offsetUnit: 'day',
      offsetN: 0,
      label: calendar.initial.label,
      dueDate: calendar.initial.dueDate,
      windowBefore: calendar.initial.windowBefore,
      windowAfter: calendar.initial.windowAfter,
    })
    .$returningId();
  out.push({ id: initialId, studyConditionId: null, kind: 'initial', label: calendar.initial.label, dueDate: calendar.initial.dueDate, offset: { unit: 'day', n: 0 }, controlCheckpointId: null });

  const scIdOf = (key: number) => conditionRows[key].id;
  const controlByDate = new Map<string, number>();
  if (calendar.controlKey != null) {
    const control = calendar.conditions.find((c) => c.key === calendar.controlKey)!;
    for (const p of control.pulls as ControlPull[]) {
      const [{ id }] = await tx
        .insert(checkpoints)
        .values({
          labId,
          studyId: study.id,
          studyConditionId: scIdOf(control.key),
          kind: 'pull',
          controlCheckpointId: p.dueDate === study.startDate ? initialId : null,
          offsetUnit: p.offset.unit,
          offsetN: p.offset.n,
          label: p.label,
          dueDate: p.dueDate,
          windowBefore: p.windowBefore,
          windowAfter: p.windowAfter,
        })
        .$returningId();
      controlByDate.set(p.dueDate, id);
      out.push({ id, studyConditionId: scIdOf(control.key), kind: 'pull', label: p.label, dueDate: p.dueDate, offset: p.offset, controlCheckpointId: null });
    }
  }
  const pullValues: (typeof checkpoints.$inferInsert)[] = [];
  for (const c of calendar.conditions) {
    if (c.key === calendar.controlKey) continue;
    for (const p of c.pulls) {
      const controlDate = 'controlDate' in p ? p.controlDate : null;
      pullValues.push({
        labId,
        studyId: study.id,
        studyConditionId: scIdOf(c.key),
        kind: 'pull',
        controlCheckpointId: controlDate == null ? null : controlDate === study.startDate ? initialId : (controlByDate.get(controlDate) ?? null),
        offsetUnit: p.offset.unit,
        offsetN: p.offset.n,
        label: p.label,
        dueDate: p.dueDate,
        windowBefore: p.windowBefore,
        windowAfter: p.windowAfter,
      });
    }
  }
  if (pullValues.length) await tx.insert(checkpoints).values(pullValues);
  const all = await tx
    .select()
    .from(checkpoints)
    .where(and(eq(checkpoints.labId, labId), eq(checkpoints.studyId, study.id)))
    .orderBy(asc(checkpoints.dueDate), asc(checkpoints.id));
  return {
    initialId,
    samples: sampleRows,
    checkpoints: all.map((c) => ({
      id: c.id,
      studyConditionId: c.studyConditionId,
      kind: c.kind === 'initial' ? 'initial' : 'pull',
      label: c.label,
      dueDate: c.dueDate,
      offset: { unit: c.offsetUnit, n: c.offsetN },
      controlCheckpointId: c.controlCheckpointId,
    })),
  };
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
    const made = await materializeStudy(tx, actor.labId, study);
    await tx.update(studies).set({ status: 'running', startedAt: new Date(), startedBy: actor.id }).where(eq(studies.id, studyId));
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: 'update',
      entity: 'study',
      entityId: studyId,
      oldValue: { status: 'draft' },
      newValue: {
        status: 'running',
        samples: made.samples.length,
        checkpoints: made.checkpoints.length,
        initialTest: { retainedSamples: made.samples.filter((s) => s.studyConditionId == null).length },
        pairedPulls: made.checkpoints.filter((c) => c.controlCheckpointId != null).length,
      },
      reason: 'Study started',
    });
  });
}

