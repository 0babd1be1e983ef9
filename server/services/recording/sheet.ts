/**
 * The Record sheet: one sample at one checkpoint, every attribute with its baseline (the batch's
 * initial test), the previous reading, the control read the same day, the current value and its
 * out-of-specification state.
 */
import { and, asc, desc, eq, inArray, ne, sql } from 'drizzle-orm';
import type { ObservationView, RecordAttribute, RecordSheet } from '../../../shared/schemas/records';
import type { Attribute } from '../../../shared/schemas/studies';
import { addDays } from '../../../shared/compute/schedule';
import type { Db, DbOrTx } from '../../db/client';
import { reusable } from '../../db/prepared';
import { batches, checkpoints, observations, oosInvestigations, products, samples, storageConditions, studyConditions, users, variants } from '../../db/schema';
import { photosFor } from '../photos';
import { conditionForCautions } from '../storage-conditions';
import { checkpointView } from '../study/detail';
import { checkpointOpen, context, samplesAtCheckpoint, type Context } from './context';
import { deviceTimes } from './device';
import { baselines, evaluateFor, judgedFrom, valueOf, type AttributeRow, type Baseline, type Value } from './values';

type ObservationRow = typeof observations.$inferSelect;
type InvestigationRow = typeof oosInvestigations.$inferSelect;

export function toView(a: AttributeRow, o: ObservationRow & { who?: string | null }, message: string, inv?: InvestigationRow | null): ObservationView {
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
    device: deviceTimes(o),
    investigation: inv
      ? {
          id: inv.id,
          status: inv.status,
          benchStep: inv.benchStep,
          remeasure: inv.remeasureValue != null && inv.remeasureVerdict ? { value: inv.remeasureValue, verdict: inv.remeasureVerdict } : null,
          conclusion: inv.conclusion,
        }
      : null,
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

// Built once and reused (server/db/prepared.ts): every Record sheet runs these.
const checkpointById = reusable((db) => db.select().from(checkpoints).where(eq(checkpoints.id, sql.placeholder('id'))));
const controlSamples = reusable((db) =>
  db
    .select({ id: samples.id, code: samples.code, replicate: samples.replicate })
    .from(samples)
    .where(and(eq(samples.studyConditionId, sql.placeholder('scId')), eq(samples.batchId, sql.placeholder('batchId'))))
    .orderBy(desc(sql`${samples.replicate} = ${sql.placeholder('replicate')}`), asc(samples.labelOrder)),
);
const controlReadings = reusable((db) =>
  db
    .select({ o: observations, code: samples.code })
    .from(observations)
    .innerJoin(samples, eq(samples.id, observations.sampleId))
    .where(
      and(
        eq(observations.checkpointId, sql.placeholder('cpId')),
        eq(samples.studyConditionId, sql.placeholder('scId')),
        eq(samples.batchId, sql.placeholder('batchId')),
        eq(observations.voided, false),
        ne(observations.verdict, 'not_done'),
      ),
    ),
);
const currentReadings = reusable((db) =>
  db
    .select({ o: observations, who: users.name })
    .from(observations)
    .innerJoin(users, eq(users.id, observations.recordedBy))
    .where(and(eq(observations.sampleId, sql.placeholder('sampleId')), eq(observations.checkpointId, sql.placeholder('checkpointId')))),
);
const previousReadings = reusable((db) =>
  db
    .select({ o: observations, label: checkpoints.label, due: checkpoints.dueDate })
    .from(observations)
    .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
    .where(and(eq(observations.sampleId, sql.placeholder('sampleId')), eq(observations.voided, false), sql`${checkpoints.dueDate} < ${sql.placeholder('due')}`))
    .orderBy(desc(checkpoints.dueDate)),
);
// Qualified by hand: drizzle leaves columns of a one-table select unqualified, and a bare `id` inside
// the subquery would name observations.id, not the sample's.
const siblingCount = (checkpointId: unknown) =>
  sql<number>`(SELECT count(*) FROM ${observations} AS o WHERE o.sample_id = ${sql.raw('`samples`.`id`')} AND o.checkpoint_id = ${checkpointId} AND o.voided = false)`;
const pullSiblings = reusable((db) =>
  db
    .select({ id: samples.id, code: samples.code, n: siblingCount(sql.placeholder('checkpointId')) })
    .from(samples)
    .where(eq(samples.studyConditionId, sql.placeholder('scId')))
    .orderBy(asc(samples.labelOrder)),
);
const conditionOf = reusable((db) =>
  db
    .select({ ...conditionForCautions, role: studyConditions.role })
    .from(studyConditions)
    .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
    .where(eq(studyConditions.id, sql.placeholder('scId'))),
);
const batchNames = reusable((db) =>
  db
    .select({ product: products.name, vCode: variants.code, vName: variants.name, lot: batches.lotCode })
    .from(batches)
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .innerJoin(products, eq(products.id, variants.productId))
    .where(eq(batches.id, sql.placeholder('batchId'))),
);
const investigationsAt = reusable((db) =>
  db
    .select()
    .from(oosInvestigations)
    .where(
      and(
        eq(oosInvestigations.labId, sql.placeholder('labId')),
        eq(oosInvestigations.sampleId, sql.placeholder('sampleId')),
        eq(oosInvestigations.checkpointId, sql.placeholder('checkpointId')),
      ),
    ),
);

interface ControlRef {
  values: Map<number, { value: Value; label: string; code: string; sameDay: boolean }>;
  reading: RecordSheet['controlReading'];
}

/**
 * The control values a pull is judged against: the readings of the control sample of the same batch
 * (same replicate first) at the pull's paired control checkpoint, read the same day. A pull without
 * one (pairing off, or a study recorded before pairing) falls back to the latest control reading up
 * to its window end, marked as not same-day.
 */
async function controlFor(db: DbOrTx, ctx: Context, role: string | null): Promise<ControlRef> {
  const values: ControlRef['values'] = new Map();
  if (ctx.checkpoint.kind !== 'pull' || role === 'control') return { values, reading: null };
  const pairedId = ctx.checkpoint.controlCheckpointId;
  if (pairedId != null) {
    const [paired] = await checkpointById(db, { id: pairedId });
    // A control pull's samples are its condition's (statements built once); the initial test's are worked out.
    const pull = paired.kind !== 'initial';
    const candidates = pull
      ? await controlSamples(db, { scId: paired.studyConditionId, batchId: ctx.sample.batchId, replicate: ctx.sample.replicate })
      : await db
          .select({ id: samples.id, code: samples.code, replicate: samples.replicate })
          .from(samples)
          .where(and(samplesAtCheckpoint(paired), eq(samples.batchId, ctx.sample.batchId)))
          .orderBy(desc(sql`${samples.replicate} = ${ctx.sample.replicate}`), asc(samples.labelOrder));
    const ids = candidates.map((c) => c.id);
    const rows = !ids.length
      ? []
      : pull
        ? await controlReadings(db, { cpId: pairedId, scId: paired.studyConditionId, batchId: ctx.sample.batchId })
        : await db
            .select({ o: observations, code: samples.code })
            .from(observations)
            .innerJoin(samples, eq(samples.id, observations.sampleId))
            .where(and(eq(observations.checkpointId, pairedId), inArray(observations.sampleId, ids), eq(observations.voided, false), ne(observations.verdict, 'not_done')));
    const rank = (sampleId: number) => ids.indexOf(sampleId);
    for (const r of rows.sort((a, b) => rank(a.o.sampleId) - rank(b.o.sampleId))) {
      if (values.has(r.o.studyAttributeId)) continue;
      const a = ctx.attrs.find((x) => x.sa.id === r.o.studyAttributeId);
      const v = a ? valueOf(a.a.kind, r.o) : null;
      if (v != null) values.set(r.o.studyAttributeId, { value: v, label: paired.label, code: r.code, sameDay: true });
    }
    return {
      values,
      reading: {
        checkpointId: paired.id,
        label: paired.label,
        dueDate: paired.dueDate,
        sampleCode: candidates[0]?.code ?? null,
        recorded: rows.length > 0,
        initial: paired.kind === 'initial',
      },
    };
  }
  // No paired reading: the latest control reading of the same batch up to this window's end.
  const rows = await db
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
    .orderBy(desc(checkpoints.dueDate));
  for (const r of rows) {
    if (values.has(r.o.studyAttributeId)) continue;
    const a = ctx.attrs.find((x) => x.sa.id === r.o.studyAttributeId);
    const v = a ? valueOf(a.a.kind, r.o) : null;
    if (v != null) values.set(r.o.studyAttributeId, { value: v, label: r.label, code: r.code, sameDay: false });
  }
  return { values, reading: null };
}

/** What a save's transaction already read for this sample and checkpoint (see `SaveResult` in save.ts). */
export interface KnownSheetInputs {
  ctx: Context;
  /** Left out where the save's own readings are baselines (the initial test, a day-0 pull). */
  base?: Map<number, Baseline>;
}

/**
 * The Record sheet of one sample at one checkpoint. `known`: the context and baselines a save just
 * read in its transaction (committed, the checkpoint as it settled it), so its answer skips reading them again.
 */
export async function recordSheet(db: Db, labId: number, code: string, checkpointId: number, today: string, known?: KnownSheetInputs): Promise<RecordSheet> {
  const ctx = known?.ctx ?? (await context(db, labId, code, checkpointId));
  const at = { sampleId: ctx.sample.id, checkpointId };
  const [base, current, previous, siblings, photos, cond, meta, invs] = await Promise.all([
    known?.base ?? baselines(db, ctx.study, ctx.sample, ctx.attrs),
    currentReadings(db, at),
    // The latest earlier checkpoint's value of this sample, per attribute.
    previousReadings(db, { sampleId: ctx.sample.id, due: ctx.checkpoint.dueDate }),
    ctx.checkpoint.kind !== 'initial'
      ? pullSiblings(db, { checkpointId, scId: ctx.checkpoint.studyConditionId })
      : db
          .select({ id: samples.id, code: samples.code, n: siblingCount(checkpointId) })
          .from(samples)
          .where(samplesAtCheckpoint(ctx.checkpoint))
          .orderBy(asc(samples.labelOrder)),
    photosFor(db, labId, { sampleId: ctx.sample.id, checkpointId }),
    ctx.sample.studyConditionId == null ? Promise.resolve([]) : conditionOf(db, { scId: ctx.sample.studyConditionId }),
    batchNames(db, { batchId: ctx.sample.batchId }),
    investigationsAt(db, { labId, ...at }),
  ]);
  const condition = cond[0] ?? null;
  const control = await controlFor(db, ctx, condition?.role ?? null);

  // This checkpoint's state and counts, as the study page shows them (recorded of expected readings).
  const cpView = checkpointView(ctx.checkpoint, today, siblings.reduce((n, x) => n + Number(x.n), 0), siblings.length * ctx.attrs.length);
  const closedReason = checkpointOpen(ctx.study, ctx.checkpoint, today, false);
  const attrsOut: RecordAttribute[] = ctx.attrs.map(({ sa, a }) => {
    const cur = current.find((c) => c.o.studyAttributeId === sa.id);
    const b = base.get(sa.id);
    const prev = previous.find((p) => p.o.studyAttributeId === sa.id);
    const ctl = a.kind === 'compared' ? control.values.get(sa.id) : undefined;
    let message = '';
    if (cur) {
      const v = valueOf(a.kind, cur.o);
      message = cur.o.verdict === 'not_done' ? `Not done: ${cur.o.notDoneReason}` : v == null ? '' : evaluateFor(a, sa.criterion, v, judgedFrom(ctx.checkpoint, b, v)).message;
    }
    const atInitial = ctx.checkpoint.kind === 'initial';
    return {
      studyAttributeId: sa.id,
      attribute: attributeView(a),
      criterion: sa.criterion,
      baseline: b && !atInitial ? b : null,
      previous:
        prev && valueOf(a.kind, prev.o) != null
          ? { value: valueOf(a.kind, prev.o)!, label: prev.label, ...(prev.o.method ? { method: prev.o.method as Record<string, string | number> } : {}) }
          : null,
      control: ctl ? { value: ctl.value, label: ctl.label, sampleCode: ctl.code, sameDay: ctl.sameDay } : null,
      current: cur ? toView(a, { ...cur.o, who: cur.who }, message, invs.find((i) => i.observationId === cur.o.id)) : null,
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
      condition,
    },
    checkpoint: cpView,
    controlReading: control.reading,
    open: closedReason === null,
    closedReason,
    locked: ctx.study.status === 'in_review' || ctx.study.status === 'decided',
    attributes: attrsOut,
    siblings: siblings.map((s) => ({ code: s.code, complete: Number(s.n) >= attributeCount })),
    photos,
  };
}
