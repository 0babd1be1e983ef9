/**
 * Study scenarios for `npm run bench` (an extra module of run.ts):
 *
 *  - bench:    GET /api/bench in a lab holding 200 studies and over 1,000,000 observations
 *              (12 running with due, overdue and upcoming work; the rest decided or cancelled).
 *  - record:   PUT /api/samples/:code/checkpoints/:id/observations, a technician saving a whole
 *              sample (10 attributes) at a checkpoint: 10 observation rows, 10 audit rows and the
 *              checkpoint's state in one transaction, on MariaDB at full durability, then the
 *              sheet read back as the route does. Every request saves a cell never saved before.
 *  - analysis: GET /api/studies/:id/analysis of a study of 4 variants x 5 conditions x 10
 *              checkpoints x 10 attributes (2,000 observations and the initial tests), one request at a time: the
 *              median (p50) is the time one formulator waits for the charts.
 *
 * Each builds its own lab in its setup (study-data.ts), so BENCH_ONLY=analysis does not pay for
 * the million rows. All data invented.
 */
import type { PoolConnection, RowDataPacket } from 'mysql2/promise';
import { analyzeStudy } from '../../server/services/analysis';
import { BENCH_CHECKPOINTS_SQL, benchDetailStatements, benchIdsOf, openCheckpoints } from '../../server/services/studies';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { INITIAL_LABEL } from '../../shared/compute/study-calendar';
import type { BenchContext, Scenario } from './scenario';
import { JSON_CHANGE, sessionRead } from './scenarios';
import { sessionIdFromCookie } from './scenario';
import { createStudyLab, emulsionValue, prng, weeks, writeStudies, type BulkStudySpec, type StudyLab } from './study-data';

interface Session {
  cookie: string;
  sessionId: string;
  userId: number;
}

async function signInAll(ctx: BenchContext, people: { id: number; email: string }[]): Promise<Session[]> {
  const out: Session[] = [];
  for (const p of people) {
    const cookie = await ctx.signIn(p.email);
    out.push({ cookie, sessionId: sessionIdFromCookie(cookie), userId: p.id });
  }
  return out;
}

/** Connection i of autocannon sends session i (mod the number of sessions). */
function perConnection(sessions: Session[]) {
  let next = 0;
  return (req: { headers?: Record<string, string> }, context: Record<string, unknown>) => {
    context.session ??= next++ % sessions.length;
    return { ...req, headers: { ...req.headers, cookie: sessions[context.session as number].cookie } };
  };
}

const count = (ctx: BenchContext, sql: string, params: unknown[]) =>
  ctx.pool.query<RowDataPacket[]>(sql, params).then(([rows]) => Number(rows[0].n));

// ------------------------------------------------------------------------------------ bench
const HISTORY_STUDIES = 200;
const RUNNING = 12;
const HISTORY_ATTRIBUTES = ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity', 'mass', 'color_l', 'color_a', 'color_b'];

export function benchScenario(): Scenario {
  let lab: StudyLab;
  let sessions: Session[] = [];
  let today = '';
  let main: { sql: string; params: unknown[] };
  /** The follow-up statements per member (one of them names the member), as the route sends them. */
  let details = new Map<number, { sql: string; values: unknown[] }[]>();
  let statements = 0;
  return {
    name: 'bench',
    about: `GET /api/bench in a lab of ${HISTORY_STUDIES} studies and over 1,000,000 observations (${RUNNING} running), 10 members of that lab polling it`,
    async setup(ctx) {
      const t0 = Date.now();
      lab = await createStudyLab(ctx, { name: 'Bench History Lab', slug: 'hist', technicians: 9, variants: 5, lotsPerVariant: 1 });
      today = localDateInZone(new Date(), lab.timeZone);
      const c = lab.conditions;
      const conditions: BulkStudySpec['conditions'] = [
        { conditionId: c['fridge-4'], role: 'control', offsets: weeks(1, 2, 4, 6, 8, 10, 12, 16, 20, 24) },
        { conditionId: c['ich-25-60'], role: 'real_time', offsets: weeks(1, 2, 4, 6, 8, 10, 12, 16, 20, 24) },
        { conditionId: c['ich-40-75'], role: 'accelerated', offsets: weeks(1, 2, 4, 6, 8, 10, 12, 16, 20, 24) },
        { conditionId: c['oven-45'], role: 'accelerated', offsets: weeks(1, 2, 4, 6, 8, 10, 12, 16, 20, 24) },
        { conditionId: c['oven-50'], role: 'stress', offsets: weeks(1, 2, 4, 6, 8, 10, 12, 16, 20, 24) },
      ];
      const specs: BulkStudySpec[] = [];
      const finished = HISTORY_STUDIES - RUNNING;
      for (let i = 0; i < HISTORY_STUDIES; i++) {
        const running = i >= finished;
        const k = i - finished;
        specs.push({
          title: running ? `Running trial ${k + 1}` : `Finished trial ${String(i + 1).padStart(3, '0')}`,
          status: running ? 'running' : i % 25 === 7 ? 'cancelled' : 'decided',
          // Finished ones start between about 5 years and 150 days ago; running ones 0 to 132 days ago.
          startDate: running ? addDays(today, -12 * k) : addDays(today, -150 - (finished - i) * 9),
          lots: lab.lots,
          conditions,
          replicates: 2,
          attributeCodes: HISTORY_ATTRIBUTES,
          value: emulsionValue,
          // Running studies: recorded up to two days ago, except a few checkpoints at the hot oven left
          // open so the Bench shows overdue work beside due and upcoming.
          recorded: running ? (cp) => cp.dueDate < addDays(today, -1) && !(k % 3 === 1 && cp.conditionIndex === 3 && cp.dueDate >= addDays(today, -12)) : undefined,
        });
      }
      let observations = 0;
      for (let g = 0; g < specs.length; g += 20) {
        const written = await writeStudies(ctx, lab, specs.slice(g, g + 20), { samplePrefix: `H${String.fromCharCode(65 + g / 20)}`, seed: 7000 + g, today });
        observations += written.reduce((n, w) => n + w.observations, 0);
      }
      const stored = await count(ctx, 'SELECT COUNT(*) AS n FROM observations WHERE lab_id = ?', [lab.id]);
      if (stored !== observations || stored < 1_000_000) throw new Error(`History lab holds ${stored} observations (wrote ${observations}); expected over 1,000,000`);
      const studies = await count(ctx, 'SELECT COUNT(*) AS n FROM studies WHERE lab_id = ?', [lab.id]);
      await ctx.pool.query('ANALYZE TABLE observations, checkpoints, samples, studies').catch(() => {});
      ctx.log(`  History lab ${lab.id}: ${studies} studies, ${stored.toLocaleString('en-US')} observations, written in ${((Date.now() - t0) / 1000).toFixed(1)} s`);

      sessions = await signInAll(ctx, [lab.formulator, ...lab.technicians]);
      const res = await fetch(`${ctx.baseUrl}/api/bench`, { headers: { cookie: sessions[0].cookie } });
      const body = (await res.json()) as { counts?: { overdue: number; due: number; upcoming: number } };
      if (res.status !== 200 || !body.counts || !(body.counts.overdue > 0 && body.counts.due > 0 && body.counts.upcoming > 0)) {
        throw new Error(`GET /api/bench answered ${res.status} with counts ${JSON.stringify(body.counts)}; expected overdue, due and upcoming work`);
      }
      ctx.log(`  The Bench shows ${body.counts.overdue} overdue, ${body.counts.due} due and ${body.counts.upcoming} upcoming checkpoints.`);

      // The SQL the route sends, from the same statements the service uses.
      const until = addDays(today, 7);
      main = { sql: BENCH_CHECKPOINTS_SQL, params: [lab.id, until] };
      const cps = await openCheckpoints(ctx.db, lab.id, until);
      details = new Map(sessions.map((s) => [s.userId, Object.values(benchDetailStatements(benchIdsOf(lab.id, s.userId, cps))).filter((x) => x != null)]));
      // The session read, the first query and the follow-ups (the raw run once sent only 5 of them).
      statements = 2 + details.get(sessions[0].userId)!.length;
    },
    request() {
      return {
        connections: 10,
        alsoAt: [50],
        goal: { ratio: 0.6, against: 'statements a request makes', p99Max: 100, latencyAt: [10] },
        note: `${sessions.length} members of the history lab signed in; connection i sends member i's session. Lab day ${today}, 7 days ahead.`,
        requests: [{ method: 'GET', path: '/api/bench', setupRequest: perConnection(sessions) }],
      };
    },
    raw: (ctx) => [
      { name: "the route's first (checkpoint) query alone", once: () => ctx.pool.execute(main.sql, main.params as (string | number)[]) },
      {
        get name() {
          return `all ${statements} statements a request makes`;
        },
        async once(loop) {
          const s = sessions[loop % sessions.length];
          await sessionRead(ctx, s.sessionId);
          await ctx.pool.execute(main.sql, main.params as (string | number)[]);
          await Promise.all(details.get(s.userId)!.map((d) => ctx.pool.query(d.sql, d.values)));
        },
      },
    ],
  };
}

// ------------------------------------------------------------------------------------ record
const RECORD_ATTRIBUTES = ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity', 'mass', 'water_activity', 'pack_integrity'];
const OPEN_PER_CONDITION = 10;

/** What a technician types for one sample (invented, all within the default criteria). */
function entryValue(code: string, rand: () => number): { value: string | number | boolean; method?: Record<string, string | number> } {
  switch (code) {
    case 'separation':
      return { value: 0 };
    case 'ph':
      return { value: Math.round((5.45 + rand() * 0.1) * 100) / 100, method: { method: 'neat' } };
    case 'viscosity':
      return { value: Math.round(26000 + rand() * 1000), method: { spindle: 'RV-6', speed: 10, temperature: 25 } };
    case 'mass':
      return { value: Math.round((45.1 + rand() * 0.1) * 100) / 100 };
    case 'water_activity':
      return { value: Math.round((0.92 + rand() * 0.02) * 1000) / 1000 };
    case 'pack_integrity':
      return { value: true };
    default:
      return { value: 'no_change' };
  }
}

export function recordScenario(): Scenario {
  let lab: StudyLab;
  let sessions: Session[] = [];
  /** Sample code, checkpoint id and the study's attribute ids of every cell still empty, in a seeded random order. */
  let cells: { code: string; sampleId: number; studyId: number; cpId: number; attrs: { id: number; code: string }[] }[] = [];
  let next = 0;
  const take = () => {
    const c = cells[next++];
    if (!c) throw new Error(`All ${cells.length} prepared sample-checkpoint pairs are used up: raise the scenario's pair count`);
    return c;
  };
  const rand = prng(515);
  const body = (c: (typeof cells)[number]) =>
    JSON.stringify({ entries: c.attrs.map((a) => ({ studyAttributeId: a.id, ...entryValue(a.code, rand) })) });
  return {
    name: 'record',
    about: 'PUT /api/samples/:code/checkpoints/:id/observations: one sample, 10 attributes, 10 audit rows, one transaction, full durability; 10 technicians at once',
    async setup(ctx) {
      const t0 = Date.now();
      lab = await createStudyLab(ctx, { name: 'Bench Recording Lab', slug: 'rec', technicians: 10, variants: 2, lotsPerVariant: 2 });
      const today = localDateInZone(new Date(), lab.timeZone);
      const c = lab.conditions;
      const offsets = weeks(...Array.from({ length: OPEN_PER_CONDITION }, (_, i) => i + 1));
      const conditions: BulkStudySpec['conditions'] = [
        { conditionId: c['fridge-4'], role: 'control', offsets },
        { conditionId: c['ich-25-60'], role: 'real_time', offsets },
        { conditionId: c['ich-40-75'], role: 'accelerated', offsets },
        { conditionId: c['oven-45'], role: 'accelerated', offsets },
      ];
      // Pairs needed: HTTP warm-up + run and the raw run, at a generous 2,000 saves/s each (the raw
      // writes reached 1,315/s on 2026-12-05 and ran out of the 600/s allowance before their run ended).
      const pairsPerStudy = lab.lots.length * 2 * conditions.length * OPEN_PER_CONDITION;
      const studies = Math.max(30, Math.ceil(((ctx.seconds * 2 + 4) * 2000) / pairsPerStudy));
      const specs: BulkStudySpec[] = Array.from({ length: studies }, (_, i) => ({
        title: `Recording trial ${i + 1}`,
        status: 'running',
        startDate: addDays(today, -7),
        lots: lab.lots,
        conditions,
        replicates: 2,
        attributeCodes: RECORD_ATTRIBUTES,
        value: emulsionValue,
        // The initial test recorded a week ago; every pull is put on today so each sample-checkpoint
        // pair is open for recording (a load generator's shortcut: real plans spread them out).
        recorded: (cp) => cp.label === INITIAL_LABEL,
        dueDate: (cp) => (cp.label === INITIAL_LABEL ? cp.dueDate : today),
      }));
      const written = await writeStudies(ctx, lab, specs, { samplePrefix: 'R', seed: 515, today });
      cells = [];
      for (const w of written) {
        for (const cp of w.openCheckpoints) {
          for (const s of w.samples.filter((x) => x.scIndex === cp.scIndex)) cells.push({ code: s.code, sampleId: s.id, studyId: w.id, cpId: cp.id, attrs: w.studyAttributes });
        }
      }
      const shuffle = prng(99);
      for (let i = cells.length - 1; i > 0; i--) {
        const j = Math.floor(shuffle() * (i + 1));
        [cells[i], cells[j]] = [cells[j], cells[i]];
      }
      next = 0;
      ctx.log(`  Recording lab ${lab.id}: ${studies} running studies, ${cells.length.toLocaleString('en-US')} empty sample-checkpoint pairs due today, written in ${((Date.now() - t0) / 1000).toFixed(1)} s`);

      sessions = await signInAll(ctx, lab.technicians);
      const first = take();
      const res = await fetch(`${ctx.baseUrl}/api/samples/${first.code}/checkpoints/${first.cpId}/observations`, {
        method: 'PUT',
        headers: { ...JSON_CHANGE, cookie: sessions[0].cookie },
        body: body(first),
      });
      const text = await res.text();
      if (res.status !== 200) throw new Error(`A first save answered ${res.status}: ${text.slice(0, 300)}`);
      const saved = await count(ctx, 'SELECT COUNT(*) AS n FROM observations WHERE sample_id = ? AND checkpoint_id = ?', [first.sampleId, first.cpId]);
      const audited = await count(ctx, "SELECT COUNT(*) AS n FROM audit_log WHERE lab_id = ? AND entity = 'observation' AND action = 'create'", [lab.id]);
      if (saved !== RECORD_ATTRIBUTES.length || audited !== RECORD_ATTRIBUTES.length) throw new Error(`A first save stored ${saved} observations and ${audited} audit rows; expected ${RECORD_ATTRIBUTES.length} of each`);
    },
    request() {
      const assign = perConnection(sessions);
      return {
        connections: 10,
        goal: { ratio: 0.5, p99Max: 150 },
        note: `${sessions.length} technicians signed in, one per connection; each request saves a different sample at a checkpoint due today (${cells.length - next} pairs left).`,
        requests: [
          {
            method: 'PUT',
            path: '/api/samples/:code/checkpoints/:id/observations',
            headers: JSON_CHANGE,
            setupRequest(req, context) {
              const c = take();
              return { ...assign(req, context), path: `/api/samples/${c.code}/checkpoints/${c.cpId}/observations`, body: body(c) };
            },
          },
        ],
      };
    },
    raw: (ctx) => [
      {
        name: 'its writes alone: 2 multi-row INSERTs, one COMMIT',
        note: 'The durable floor of one save: the observation and audit INSERTs the route makes (10 rows each, one statement each), in one transaction, without its reads, checks or the sheet it sends back.',
        async once(loop) {
          const c = take();
          const userId = lab.technicians[loop % lab.technicians.length].id;
          const conn: PoolConnection = await (ctx.pool as unknown as { getConnection(): Promise<PoolConnection> }).getConnection();
          try {
            await conn.beginTransaction();
            const values = c.attrs.map((a) => {
              const v = entryValue(a.code, rand);
              return { a, v, row: [lab.id, c.studyId, c.sampleId, c.cpId, a.id, typeof v.value === 'number' ? v.value : null, typeof v.value === 'string' ? v.value : null, typeof v.value === 'boolean' ? v.value : null, v.method ? JSON.stringify(v.method) : null, 'pass', userId] };
            });
            const [r] = await conn.query<import('mysql2').ResultSetHeader>(
              'INSERT INTO observations (lab_id, study_id, sample_id, checkpoint_id, study_attribute_id, value_num, value_text, value_bool, method, verdict, recorded_by) VALUES ?',
              [values.map((x) => x.row)],
            );
            await conn.query('INSERT INTO audit_log (lab_id, user_id, action, entity, entity_id, study_id, new_value) VALUES ?', [
              values.map((x, i) => [lab.id, userId, 'create', 'observation', String(r.insertId + i), c.studyId, JSON.stringify({ sample: c.code, attribute: x.a.code, value: x.v.value, verdict: 'pass' })]),
            ]);
            await conn.commit();
          } catch (err) {
            await conn.rollback().catch(() => {});
            throw err;
          } finally {
            conn.release();
          }
        },
      },
    ],
  };
}

// ------------------------------------------------------------------------------------ analysis
const ANALYSIS_ATTRIBUTES = ['appearance', 'odor', 'separation', 'texture', 'ph', 'viscosity', 'mass', 'color_l', 'color_a', 'color_b'];

export function analysisScenario(): Scenario {
  let lab: StudyLab;
  let studyId = 0;
  let sessions: Session[] = [];
  let today = '';
  return {
    name: 'analysis',
    about: 'GET /api/studies/:id/analysis of 4 variants x 5 conditions x 10 checkpoints x 10 attributes (2,000 observations and the initial tests), one request at a time',
    async setup(ctx) {
      lab = await createStudyLab(ctx, { name: 'Bench Analysis Lab', slug: 'ana', technicians: 1, variants: 4, lotsPerVariant: 1 });
      today = localDateInZone(new Date(), lab.timeZone);
      const c = lab.conditions;
      const offsets = weeks(1, 2, 4, 8, 13, 26, 39, 52, 78, 104);
      const [written] = await writeStudies(
        ctx,
        lab,
        [
          {
            title: 'Four variants, two years',
            status: 'running',
            startDate: addDays(today, -800),
            lots: lab.lots,
            conditions: [
              { conditionId: c['fridge-4'], role: 'control', offsets },
              { conditionId: c['ich-25-60'], role: 'real_time', offsets },
              { conditionId: c['ich-30-65'], role: 'real_time', offsets },
              { conditionId: c['ich-40-75'], role: 'accelerated', offsets },
              { conditionId: c['oven-45'], role: 'accelerated', offsets },
            ],
            replicates: 1,
            attributeCodes: ANALYSIS_ATTRIBUTES,
            value: emulsionValue,
          },
        ],
        { samplePrefix: 'N', seed: 404, today },
      );
      studyId = written.id;
      // 4 variants x 5 conditions x 10 pulls x 10 attributes, and each variant's initial test.
      if (written.observations !== 4 * 5 * 10 * 10 + 4 * 10) throw new Error(`The analysis study has ${written.observations} observations, expected 2,040`);
      sessions = await signInAll(ctx, [lab.formulator]);
      const t0 = performance.now();
      const res = await fetch(`${ctx.baseUrl}/api/studies/${studyId}/analysis`, { headers: { cookie: sessions[0].cookie } });
      const out = (await res.json()) as { analysis?: { regressions: unknown[]; series: unknown[]; suggestions: unknown[] } };
      if (res.status !== 200 || !out.analysis?.regressions.length) throw new Error(`GET /api/studies/${studyId}/analysis answered ${res.status} without regressions`);
      ctx.log(
        `  Analysis study ${studyId}: ${out.analysis.series.length} series, ${out.analysis.regressions.length} regressions, ${out.analysis.suggestions.length} suggestions; first (cold) request ${(performance.now() - t0).toFixed(0)} ms`,
      );
    },
    request() {
      return {
        connections: 1,
        goal: { p50Max: 20 },
        note: 'One connection: p50 is the median time of one full analysis as a formulator waits for it.',
        requests: [{ method: 'GET', path: `/api/studies/${studyId}/analysis`, setupRequest: perConnection(sessions) }],
      };
    },
    raw: (ctx) => [
      {
        name: 'analyzeStudy() in this process (no HTTP or session)',
        concurrency: 1,
        once: () => analyzeStudy(ctx.db, lab.id, studyId, today, 2),
        note: 'The same service call the route makes (Q10 = 2, the lab default), through the raw pool: queries plus computation, without Express, the session and JSON.',
      },
    ],
  };
}

export const scenarios = (): Scenario[] => [benchScenario(), recordScenario(), analysisScenario()];
