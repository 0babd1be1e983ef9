/**
 * The Bench: open checkpoints of running studies whose window has started or starts within `days`,
 * including overdue ones, grouped by location then condition. The initial test (retained samples, in
 * no condition) has its own group; a control reading names the pulls it is read beside.
 */
import { and, asc, eq, inArray, isNull, or, sql, type Placeholder } from 'drizzle-orm';
import { addDays, checkpointState } from '../../../shared/compute/schedule';
import type { BenchResponse } from '../../../shared/schemas/studies';
import type { Db, DbOrTx } from '../../db/client';
import { reusable } from '../../db/prepared';
import { batches, checkpoints, observations, products, samples, storageConditions, studies, studyAttributes, studyConditions, variants } from '../../db/schema';
import { unconfirmedBySample } from '../oos';
import { INITIAL_GROUP, orderBenchGroups } from '../../../shared/compute/bench';
import { studiesOfMember } from './responsibles';

/** Where the Bench lists the initial test: its samples are the batches' retained samples. */
export { INITIAL_GROUP };

/** The checkpoint columns the Bench uses, by name (not the whole row). */
const benchCheckpointColumns = {
  id: checkpoints.id,
  kind: checkpoints.kind,
  label: checkpoints.label,
  studyId: checkpoints.studyId,
  studyConditionId: checkpoints.studyConditionId,
  dueDate: checkpoints.dueDate,
  windowBefore: checkpoints.windowBefore,
  windowAfter: checkpoints.windowAfter,
};

/**
 * The Bench's first query: open checkpoints of running studies whose window opens by `until`, with
 * values or placeholders. Exported for `npm run bench` (its SQL).
 */
export function benchCheckpointsQuery(db: DbOrTx, labId: number | Placeholder, until: string | Placeholder) {
  return db
    .select({
      cp: benchCheckpointColumns,
      studyTitle: studies.title,
      productName: products.name,
      condId: storageConditions.id,
      condName: storageConditions.name,
      condKind: storageConditions.kind,
      role: studyConditions.role,
      setpointC: storageConditions.setpointC,
      location: storageConditions.location,
    })
    .from(checkpoints)
    .innerJoin(studies, eq(studies.id, checkpoints.studyId))
    .innerJoin(products, eq(products.id, studies.productId))
    .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
    .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
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

/** The same query built once per process (db/prepared.ts `reusable`): the Bench runs it on every poll. */
const openCheckpoints = reusable((db) => benchCheckpointsQuery(db, sql.placeholder('labId'), sql.placeholder('until')));

/**
 * The Bench's follow-up queries (run together): samples (each condition's, and the retained samples of
 * studies with an open initial test), attribute counts, recorded counts. Exported for `npm run bench`.
 */
export function benchDetailQueries(db: Db, labId: number, scIds: number[], studyIds: number[], cpIds: number[], initialStudyIds: number[] = []) {
  const where = [scIds.length ? inArray(samples.studyConditionId, scIds) : undefined, initialStudyIds.length ? and(inArray(samples.studyId, initialStudyIds), isNull(samples.studyConditionId)) : undefined].filter(
    (x) => x != null,
  );
  return [
    db
      .select({
        id: samples.id,
        code: samples.code,
        scId: samples.studyConditionId,
        studyId: samples.studyId,
        lotCode: batches.lotCode,
        variantCode: variants.code,
        order: samples.labelOrder,
      })
      .from(samples)
      .innerJoin(batches, eq(batches.id, samples.batchId))
      .innerJoin(variants, eq(variants.id, batches.variantId))
      .where(and(eq(samples.labId, labId), where.length ? or(...where) : sql`false`))
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

/** `userId`: the signed-in member, to mark the studies they are responsible for (`study.mine`). */
export async function bench(db: Db, labId: number, today: string, days: number, userId = 0): Promise<BenchResponse> {
  const until = addDays(today, days);
  const cps = await openCheckpoints(db, { labId, until });

  const counts = { overdue: 0, due: 0, upcoming: 0 };
  if (!cps.length) return { today, until, counts, groups: [] };

  const scIds = [...new Set(cps.filter((c) => c.cp.kind !== 'initial').map((c) => c.cp.studyConditionId!))];
  const studyIds = [...new Set(cps.map((c) => c.cp.studyId))];
  const initialStudyIds = [...new Set(cps.filter((c) => c.cp.kind === 'initial').map((c) => c.cp.studyId))];
  const cpIds = cps.map((c) => c.cp.id);
  const controlIds = cps.filter((c) => c.role === 'control').map((c) => c.cp.id);
  const [[sampleRows, attrCounts, recorded], unconfirmed, served, myStudies] = await Promise.all([
    Promise.all(benchDetailQueries(db, labId, scIds, studyIds, cpIds, initialStudyIds)),
    unconfirmedBySample(db, labId, cpIds),
    controlIds.length
      ? db
          .select({ controlId: checkpoints.controlCheckpointId, label: checkpoints.label, name: storageConditions.name })
          .from(checkpoints)
          .innerJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
          .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
          .where(and(eq(checkpoints.labId, labId), inArray(checkpoints.controlCheckpointId, controlIds)))
          .orderBy(asc(studyConditions.position))
      : Promise.resolve([]),
    studiesOfMember(db, labId, userId, studyIds),
  ]);
  // Condition samples holding initial readings (studies recorded before the initial test existed).
  const holders = initialStudyIds.length
    ? await db
        .selectDistinct({ cpId: observations.checkpointId, sampleId: observations.sampleId })
        .from(observations)
        .where(and(eq(observations.labId, labId), inArray(observations.checkpointId, cps.filter((c) => c.cp.kind === 'initial').map((c) => c.cp.id))))
    : [];

  const groups: BenchResponse['groups'] = [];
  for (const c of cps) {
    const state = checkpointState(c.cp.dueDate, c.cp.windowBefore, c.cp.windowAfter, today, false, false);
    if (state === 'overdue' || state === 'due' || state === 'upcoming') counts[state]++;
    const initial = c.cp.kind === 'initial';
    const location = initial ? INITIAL_GROUP : c.location || 'No location set';
    let group = groups.find((g) => g.location === location);
    if (!group) groups.push((group = { location, conditions: [] }));
    const condKey = initial ? null : c.condId;
    let cond = group.conditions.find((x) => x.id === condKey);
    if (!cond) {
      group.conditions.push(
        (cond = initial
          ? { id: null, name: 'Retained samples', kind: null, role: null, setpointC: null, checkpoints: [] }
          : { id: c.condId, name: c.condName!, kind: c.condKind, role: c.role, setpointC: c.setpointC, checkpoints: [] }),
      );
    }
    const attributeCount = Number(attrCounts.find((a) => a.studyId === c.cp.studyId)?.n ?? 0);
    const mine = initial
      ? sampleRows.filter(
          (s) =>
            s.studyId === c.cp.studyId &&
            (s.scId == null || holders.some((h) => h.cpId === c.cp.id && h.sampleId === s.id)),
        )
      : sampleRows.filter((s) => s.scId === c.cp.studyConditionId);
    const benchSamples = mine.map((s) => ({
      id: s.id,
      code: s.code,
      lotCode: s.lotCode,
      variantCode: s.variantCode,
      recorded: Number(recorded.find((r) => r.cpId === c.cp.id && r.sampleId === s.id)?.n ?? 0),
      unconfirmed: unconfirmed.get(`${c.cp.id}:${s.id}`) ?? 0,
    }));
    const done = benchSamples.reduce((sum, s) => sum + s.recorded, 0);
    cond.checkpoints.push({
      id: c.cp.id,
      kind: c.cp.kind,
      label: c.cp.label,
      serves: served.filter((x) => x.controlId === c.cp.id).map((x) => `${x.name} ${x.label}`),
      dueDate: c.cp.dueDate,
      windowStart: addDays(c.cp.dueDate, -c.cp.windowBefore),
      windowEnd: addDays(c.cp.dueDate, c.cp.windowAfter),
      state,
      study: { id: c.cp.studyId, title: c.studyTitle, product: c.productName, mine: myStudies.has(c.cp.studyId) },
      attributeCount,
      toRecord: Math.max(0, benchSamples.length * attributeCount - done),
      samples: benchSamples,
    });
  }
  // Overdue work first within each condition; locations by urgency (shared/compute/bench.ts).
  const rank = { overdue: 0, due: 1, upcoming: 2, done: 3, missed: 4 } as const;
  for (const g of groups) for (const c of g.conditions) c.checkpoints.sort((a, b) => rank[a.state] - rank[b.state] || a.dueDate.localeCompare(b.dueDate));
  return { today, until, counts, groups: orderBenchGroups(groups) };
}
