/**
 * The Bench: open checkpoints of running studies whose window has started or starts within `days`,
 * including overdue ones, grouped by location then condition. The initial test (retained samples, in
 * no condition) has its own group; a control reading names the pulls it is read beside.
 */
import { addDays, checkpointState } from '../../../shared/compute/schedule';
import type { BenchResponse } from '../../../shared/schemas/studies';
import type { Db } from '../../db/client';
import { listRows, rows, type Statement } from '../../db/prepared';
import { INITIAL_GROUP, orderBenchGroups } from '../../../shared/compute/bench';

/** Where the Bench lists the initial test: its samples are the batches' retained samples. */
export { INITIAL_GROUP };

/**
 * The Bench's first statement: open checkpoints of running studies whose window opens by the date
 * given, with their study, product and condition. Values: lab id, date. A prepared statement (the
 * Bench runs it on every poll); `npm run bench` sends the same text.
 */
export const BENCH_CHECKPOINTS_SQL =
  'SELECT c.id, c.kind, c.label, c.study_id AS studyId, c.study_condition_id AS studyConditionId, ' +
  "DATE_FORMAT(c.due_date, '%Y-%m-%d') AS dueDate, c.window_before AS windowBefore, c.window_after AS windowAfter, " +
  's.title AS studyTitle, p.name AS productName, st.id AS condId, st.name AS condName, st.kind AS condKind, sc.role, ' +
  'st.setpoint_c AS setpointC, st.location ' +
  'FROM checkpoints c JOIN studies s ON s.id = c.study_id JOIN products p ON p.id = s.product_id ' +
  'LEFT JOIN study_conditions sc ON sc.id = c.study_condition_id LEFT JOIN storage_conditions st ON st.id = sc.condition_id ' +
  "WHERE c.lab_id = ? AND c.status = 'open' AND s.status = 'running' AND DATE_SUB(c.due_date, INTERVAL c.window_before DAY) <= ? " +
  'ORDER BY st.location, st.name, c.due_date';

type Checkpoint = BenchResponse['groups'][number]['conditions'][number]['checkpoints'][number];
type Condition = BenchResponse['groups'][number]['conditions'][number];

/** One row of {@link BENCH_CHECKPOINTS_SQL}. */
export interface OpenCheckpoint {
  id: number;
  kind: Checkpoint['kind'];
  label: string;
  studyId: number;
  studyConditionId: number | null;
  dueDate: string;
  windowBefore: number;
  windowAfter: number;
  studyTitle: string;
  productName: string;
  condId: number | null;
  condName: string | null;
  condKind: Condition['kind'];
  role: Condition['role'];
  setpointC: number | null;
  location: string | null;
}

/** Open checkpoints whose window opens by `until` (see {@link BENCH_CHECKPOINTS_SQL}). */
export async function openCheckpoints(db: Db, labId: number, until: string): Promise<OpenCheckpoint[]> {
  const list = await rows<OpenCheckpoint>(db, BENCH_CHECKPOINTS_SQL, [labId, until]);
  // DECIMAL comes back as a string.
  for (const r of list) if (r.setpointC != null) r.setpointC = Number(r.setpointC);
  return list;
}

/** The ids the Bench's follow-up statements are about, from its first query. */
export interface BenchIds {
  labId: number;
  /** The signed-in member (studies they are responsible for). */
  userId: number;
  /** Conditions of open pulls. */
  scIds: number[];
  studyIds: number[];
  cpIds: number[];
  /** Studies with an open initial test, and those checkpoints. */
  initialStudyIds: number[];
  initialCpIds: number[];
  /** Open control readings (the pulls each is read beside). */
  controlIds: number[];
}

/**
 * The Bench's follow-up statements, run together: samples (each condition's, and the retained
 * samples of studies with an open initial test), attribute counts, recorded counts, unconfirmed
 * out-of-specification results, the member's studies, the pulls each control reading serves, and
 * condition samples holding initial readings. Flat SQL (issue 14: built with the ORM on every poll,
 * they cost more than half the route's CPU). Exported for `npm run bench`, which sends the same.
 * `cpIds` and `studyIds` are never empty (the Bench asks only when its first query found work).
 */
export function benchDetailStatements(ids: BenchIds) {
  const { labId, userId, scIds, studyIds, cpIds, initialStudyIds, initialCpIds, controlIds } = ids;
  const which = [
    ...(scIds.length ? [{ sql: 's.study_condition_id IN (?)', values: [scIds] }] : []),
    ...(initialStudyIds.length ? [{ sql: '(s.study_id IN (?) AND s.study_condition_id IS NULL)', values: [initialStudyIds] }] : []),
  ];
  return {
    samples: {
      sql:
        'SELECT s.id, s.code, s.study_condition_id AS scId, s.study_id AS studyId, b.lot_code AS lotCode, v.code AS variantCode ' +
        'FROM samples s JOIN batches b ON b.id = s.batch_id JOIN variants v ON v.id = b.variant_id ' +
        `WHERE s.lab_id = ? AND (${which.length ? which.map((w) => w.sql).join(' OR ') : 'FALSE'}) ORDER BY s.label_order`,
      values: [labId, ...which.flatMap((w) => w.values)],
    },
    attrCounts: { sql: 'SELECT study_id AS studyId, COUNT(*) AS n FROM study_attributes WHERE study_id IN (?) GROUP BY study_id', values: [studyIds] },
    recorded: {
      sql: 'SELECT checkpoint_id AS cpId, sample_id AS sampleId, COUNT(*) AS n FROM observations WHERE checkpoint_id IN (?) AND voided = 0 GROUP BY checkpoint_id, sample_id',
      values: [cpIds],
    },
    unconfirmed: {
      sql:
        'SELECT checkpoint_id AS cpId, sample_id AS sampleId, COUNT(*) AS n FROM oos_investigations ' +
        "WHERE lab_id = ? AND checkpoint_id IN (?) AND bench_step = 'unconfirmed' AND status = 'open' GROUP BY checkpoint_id, sample_id",
      values: [labId, cpIds],
    },
    mine: { sql: 'SELECT study_id AS studyId FROM study_responsibles WHERE lab_id = ? AND user_id = ? AND study_id IN (?)', values: [labId, userId, studyIds] },
    served: controlIds.length
      ? {
          sql:
            'SELECT c.control_checkpoint_id AS controlId, c.label, st.name FROM checkpoints c ' +
            'JOIN study_conditions sc ON sc.id = c.study_condition_id JOIN storage_conditions st ON st.id = sc.condition_id ' +
            'WHERE c.lab_id = ? AND c.control_checkpoint_id IN (?) ORDER BY sc.position',
          values: [labId, controlIds],
        }
      : null,
    holders: initialCpIds.length
      ? { sql: 'SELECT DISTINCT checkpoint_id AS cpId, sample_id AS sampleId FROM observations WHERE lab_id = ? AND checkpoint_id IN (?)', values: [labId, initialCpIds] }
      : null,
  } satisfies Record<string, Statement | null>;
}

/** The ids the follow-up statements need, from the first statement's rows. Exported for `npm run bench`. */
export function benchIdsOf(labId: number, userId: number, cps: OpenCheckpoint[]): BenchIds {
  const initial = cps.filter((c) => c.kind === 'initial');
  return {
    labId,
    userId,
    scIds: [...new Set(cps.filter((c) => c.kind !== 'initial').map((c) => c.studyConditionId!))],
    studyIds: [...new Set(cps.map((c) => c.studyId))],
    cpIds: cps.map((c) => c.id),
    initialStudyIds: [...new Set(initial.map((c) => c.studyId))],
    initialCpIds: initial.map((c) => c.id),
    controlIds: cps.filter((c) => c.role === 'control').map((c) => c.id),
  };
}

type IdCount = { cpId: number; sampleId: number; n: number };

/** `userId`: the signed-in member, to mark the studies they are responsible for (`study.mine`). */
export async function bench(db: Db, labId: number, today: string, days: number, userId = 0): Promise<BenchResponse> {
  const until = addDays(today, days);
  const cps = await openCheckpoints(db, labId, until);

  const counts = { overdue: 0, due: 0, upcoming: 0 };
  if (!cps.length) return { today, until, counts, groups: [] };

  const q = benchDetailStatements(benchIdsOf(labId, userId, cps));
  const none = Promise.resolve([]);
  const [sampleRows, attrCounts, recorded, unconfirmedRows, mineRows, served, holders] = await Promise.all([
    listRows<{ id: number; code: string; scId: number | null; studyId: number; lotCode: string; variantCode: string }>(db, q.samples),
    listRows<{ studyId: number; n: number }>(db, q.attrCounts),
    listRows<IdCount>(db, q.recorded),
    listRows<IdCount>(db, q.unconfirmed),
    listRows<{ studyId: number }>(db, q.mine),
    q.served ? listRows<{ controlId: number; label: string; name: string }>(db, q.served) : none,
    // Condition samples holding initial readings (studies recorded before the initial test existed).
    q.holders ? listRows<{ cpId: number; sampleId: number }>(db, q.holders) : none,
  ]);
  const unconfirmed = new Map(unconfirmedRows.map((r) => [`${r.cpId}:${r.sampleId}`, Number(r.n)]));
  const myStudies = new Set(mineRows.map((r) => r.studyId));

  const groups: BenchResponse['groups'] = [];
  for (const c of cps) {
    const state = checkpointState(c.dueDate, c.windowBefore, c.windowAfter, today, false, false);
    if (state === 'overdue' || state === 'due' || state === 'upcoming') counts[state]++;
    const initial = c.kind === 'initial';
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
    const attributeCount = Number(attrCounts.find((a) => a.studyId === c.studyId)?.n ?? 0);
    const mine = initial
      ? sampleRows.filter(
          (s) =>
            s.studyId === c.studyId &&
            (s.scId == null || holders.some((h) => h.cpId === c.id && h.sampleId === s.id)),
        )
      : sampleRows.filter((s) => s.scId === c.studyConditionId);
    const benchSamples = mine.map((s) => ({
      id: s.id,
      code: s.code,
      lotCode: s.lotCode,
      variantCode: s.variantCode,
      recorded: Number(recorded.find((r) => r.cpId === c.id && r.sampleId === s.id)?.n ?? 0),
      unconfirmed: unconfirmed.get(`${c.id}:${s.id}`) ?? 0,
    }));
    const done = benchSamples.reduce((sum, s) => sum + s.recorded, 0);
    cond.checkpoints.push({
      id: c.id,
      kind: c.kind,
      label: c.label,
      serves: served.filter((x) => x.controlId === c.id).map((x) => `${x.name} ${x.label}`),
      dueDate: c.dueDate,
      windowStart: addDays(c.dueDate, -c.windowBefore),
      windowEnd: addDays(c.dueDate, c.windowAfter),
      state,
      study: { id: c.studyId, title: c.studyTitle, product: c.productName, mine: myStudies.has(c.studyId) },
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
