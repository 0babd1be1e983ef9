/**
 * Study-shaped bench data: a lab with its members, the starter attributes, every preset storage
 * condition (with the demo month of oven log), the demo catalogue and extra variants and lots,
 * and then whole studies written with multi-row inserts and explicit ids (samples, dated
 * checkpoints, observations with the verdicts the shared criteria give).
 *
 * Written through the app's own database account, like the rest of the bench data, while the app
 * is idle between scenarios (the explicit ids are taken from MAX(id) + 1). Every name and value is
 * invented; none of it is reference data.
 */
import bcrypt from 'bcryptjs';
import type { ResultSetHeader, RowDataPacket } from 'mysql2';
import { attributes } from '../../server/db/schema';
import { seedFormulas } from '../../server/demo/formulas';
import { mulberry32, seedStorage } from '../../server/demo/storage';
import { ensureStarterAttributes } from '../../server/services/labs';
import { evaluate, type Criterion } from '../../shared/compute/criteria';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { isDayZero, studyCalendar } from '../../shared/compute/study-calendar';
import type { PlanOffset } from '../../shared/domain';
import type { PresetKey } from '../../shared/storage-presets';
import type { Role } from '../../shared/roles';
import { eq } from 'drizzle-orm';
import type { BenchContext } from './scenario';

export type Value = number | string | boolean;

export interface LabMember {
  id: number;
  email: string;
  role: Role;
}

export interface StudyLab {
  id: number;
  timeZone: string;
  members: LabMember[];
  owner: LabMember;
  formulator: LabMember;
  technicians: LabMember[];
  conditions: Record<PresetKey, number>;
  /** Starter attributes by code. */
  attrs: Map<string, { id: number; kind: string; criterion: Criterion }>;
  productId: number;
  /** Lots of the lab's first product, `lotsPerVariant` per variant, variants A, B, C ... */
  lots: { id: number; variantCode: string; lotCode: string }[];
}

/** The demo's seeded generator, so every run writes the same data. */
export const prng = mulberry32;

const VARIANT_CODES = 'ABCDEFGH';

/**
 * A new lab: one owner, one formulator and `technicians` technicians (e-mail `<slug>-tN@bench.example`),
 * starter attributes, preset conditions, the demo catalogue, and `variants` variants of the demo hand
 * cream with `lotsPerVariant` lots each.
 */
export async function createStudyLab(
  ctx: BenchContext,
  opts: { name: string; slug: string; technicians: number; variants: number; lotsPerVariant: number; timeZone?: string },
): Promise<StudyLab> {
  const { pool, db } = ctx;
  const timeZone = opts.timeZone ?? 'UTC';
  const [lab] = await pool.query<ResultSetHeader>('INSERT INTO labs (name, time_zone) VALUES (?, ?)', [opts.name, timeZone]);
  const labId = lab.insertId;
  const hash = bcrypt.hashSync(ctx.data.password, 10);
  const people: [string, string, Role][] = [
    [`${opts.slug}-owner@bench.example`, 'Rosa Lindqvist', 'owner'],
    [`${opts.slug}-formulator@bench.example`, 'Teo Marchetti', 'formulator'],
    ...Array.from({ length: opts.technicians }, (_, i): [string, string, Role] => [`${opts.slug}-t${i + 1}@bench.example`, `Bench Technician ${i + 1}`, 'technician']),
  ];
  await pool.query('INSERT INTO users (lab_id, email, name, password_hash, role) VALUES ?', [people.map(([email, name, role]) => [labId, email, name, hash, role])]);
  const [userRows] = await pool.query<RowDataPacket[]>('SELECT id, email, role FROM users WHERE lab_id = ? ORDER BY id', [labId]);
  const members = userRows.map((r) => ({ id: Number(r.id), email: String(r.email), role: r.role as Role }));
  const owner = members.find((m) => m.role === 'owner')!;
  const formulator = members.find((m) => m.role === 'formulator')!;

  await ensureStarterAttributes(db, labId);
  const conditions = await seedStorage(db, labId, formulator.id);
  const catalogue = await seedFormulas(db, labId, formulator.id);
  const attrRows = await db.select().from(attributes).where(eq(attributes.labId, labId));
  const attrs = new Map(attrRows.map((a) => [a.code, { id: a.id, kind: a.kind, criterion: a.defaultCriterion ?? ({ kind: 'none' } as Criterion) }]));

  // Variants A and B come from the catalogue; C, D ... are extra (no formula lines: the bench does not read them).
  const productId = catalogue.products.handCream;
  const variantIds: { id: number; code: string }[] = [
    { id: catalogue.variants.handCreamA, code: 'A' },
    { id: catalogue.variants.handCreamB, code: 'B' },
  ];
  for (let v = 2; v < opts.variants; v++) {
    const code = VARIANT_CODES[v];
    const [res] = await pool.query<ResultSetHeader>(
      'INSERT INTO variants (lab_id, product_id, code, name, created_by) VALUES (?, ?, ?, ?, ?)',
      [labId, productId, code, `Bench variant ${code}`, formulator.id],
    );
    variantIds.push({ id: res.insertId, code });
  }
  const lotRows: unknown[][] = [];
  for (const v of variantIds.slice(0, opts.variants)) {
    for (let l = 1; l <= opts.lotsPerVariant; l++) {
      lotRows.push([labId, v.id, `${opts.slug.toUpperCase()}-${v.code}-${String(l).padStart(3, '0')}`, '2024-01-15', 2000, '50 mL PET jar, PP lid', 50, 'mL', '[]', formulator.id]);
    }
  }
  await pool.query(
    'INSERT INTO batches (lab_id, variant_id, lot_code, made_on, size_grams, packaging, fill_amount, fill_unit, formula_snapshot, created_by) VALUES ?',
    [lotRows],
  );
  const [lots] = await pool.query<RowDataPacket[]>(
    `SELECT b.id, v.code AS variant_code, b.lot_code FROM batches b JOIN variants v ON v.id = b.variant_id
     WHERE b.lab_id = ? AND b.lot_code LIKE ? ORDER BY v.code, b.lot_code`,
    [labId, `${opts.slug.toUpperCase()}-%`],
  );
  return {
    id: labId,
    timeZone,
    members,
    owner,
    formulator,
    technicians: members.filter((m) => m.role === 'technician'),
    conditions,
    attrs,
    productId,
    lots: lots.map((r) => ({ id: Number(r.id), variantCode: String(r.variant_code), lotCode: String(r.lot_code) })),
  };
}

export interface CellInfo {
  variantCode: string;
  role: string;
  /** Days since the study's start. */
  day: number;
  replicate: number;
  rand: () => number;
}

export interface BulkStudySpec {
  title: string;
  status: 'running' | 'decided' | 'cancelled' | 'in_review';
  startDate: string;
  lots: StudyLab['lots'];
  conditions: { conditionId: number; role: 'control' | 'accelerated' | 'real_time' | 'stress'; offsets: PlanOffset[] }[];
  replicates: number;
  attributeCodes: string[];
  /** The value of one cell; undefined leaves it empty. */
  value(code: string, c: CellInfo): Value | undefined;
  /**
   * Whether a checkpoint is recorded (done, with observations) or left open. Default: recorded
   * when its due date is before `today`.
   */
  recorded?(cp: { dueDate: string; label: string; conditionIndex: number }): boolean;
  /** Overrides the due date of a checkpoint (and keeps its window): for the recording bench. */
  dueDate?(cp: { dueDate: string; label: string; conditionIndex: number }): string;
}

interface Ids {
  study: number;
  sc: number;
  sa: number;
  sample: number;
  cp: number;
  obs: number;
}

async function nextIds(ctx: BenchContext): Promise<Ids> {
  const [[r]] = await ctx.pool.query<RowDataPacket[]>(
    `SELECT (SELECT COALESCE(MAX(id), 0) FROM studies) AS study, (SELECT COALESCE(MAX(id), 0) FROM study_conditions) AS sc,
            (SELECT COALESCE(MAX(id), 0) FROM study_attributes) AS sa, (SELECT COALESCE(MAX(id), 0) FROM samples) AS sample,
            (SELECT COALESCE(MAX(id), 0) FROM checkpoints) AS cp, (SELECT COALESCE(MAX(id), 0) FROM observations) AS obs`,
  );
  return { study: Number(r.study) + 1, sc: Number(r.sc) + 1, sa: Number(r.sa) + 1, sample: Number(r.sample) + 1, cp: Number(r.cp) + 1, obs: Number(r.obs) + 1 };
}

/** Rows waiting to be written, flushed in statements of `chunk` rows, `parallel` statements at a time. */
class Writer {
  private pending: { table: string; cols: string; rows: unknown[][] }[] = [];
  private buffers = new Map<string, { cols: string; rows: unknown[][] }>();
  constructor(
    private ctx: BenchContext,
    private chunk = 4000,
  ) {}
  add(table: string, cols: string, row: unknown[]) {
    let b = this.buffers.get(table);
    if (!b) this.buffers.set(table, (b = { cols, rows: [] }));
    b.rows.push(row);
    if (b.rows.length >= this.chunk) {
      this.pending.push({ table, cols, rows: b.rows });
      b.rows = [];
    }
  }
  /** Writes parents before children: the order tables were first added in. */
  async flush(parallel = 4) {
    for (const [table, b] of this.buffers) if (b.rows.length) this.pending.push({ table, cols: b.cols, rows: b.rows.splice(0) });
    const order = [...this.buffers.keys()];
    for (const table of order) {
      const work = this.pending.filter((p) => p.table === table);
      let next = 0;
      await Promise.all(
        Array.from({ length: parallel }, async () => {
          while (next < work.length) {
            const w = work[next++];
            await this.ctx.pool.query(`INSERT INTO ${w.table} (${w.cols}) VALUES ?`, [w.rows]);
          }
        }),
      );
    }
    this.pending = [];
  }
}

const SAMPLE_ALPHABET = '0123456789ABCDEFGHJKMNPQRSTVWXYZ';
function sampleCode(prefix: string, n: number): string {
  let s = '';
  for (let i = 0; i < 5; i++) {
    s = SAMPLE_ALPHABET[n % 32] + s;
    n = Math.floor(n / 32);
  }
  return prefix + s;
}

export interface WrittenStudy {
  id: number;
  /** scIndex: the condition's index in the spec; -1 for a batch's retained samples (the initial test). */
  samples: { id: number; code: string; scIndex: number }[];
  /** Checkpoints left open, by condition. */
  openCheckpoints: { id: number; scIndex: number; dueDate: string }[];
  studyAttributes: { id: number; code: string }[];
  observations: number;
}

/**
 * Writes whole studies with multi-row inserts. Sample codes are `prefix` + a running number, so
 * they stay unique in the lab across calls with different prefixes.
 */
export async function writeStudies(ctx: BenchContext, lab: StudyLab, specs: BulkStudySpec[], opts: { samplePrefix: string; seed: number; today?: string }): Promise<WrittenStudy[]> {
  const ids = await nextIds(ctx);
  const w = new Writer(ctx);
  const today = opts.today ?? localDateInZone(new Date(), lab.timeZone);
  const rand = prng(opts.seed);
  const out: WrittenStudy[] = [];
  let sampleNo = 0;
  const technician = lab.technicians[0] ?? lab.formulator;
  for (const spec of specs) {
    const studyId = ids.study++;
    const started = spec.status !== 'running' || spec.startDate <= today;
    w.add(
      'studies',
      'id, lab_id, product_id, title, status, start_date, responsible_id, samples_per_cell, container_description, fill_grams, started_at, started_by, created_by',
      [studyId, lab.id, lab.productId, spec.title, spec.status, spec.startDate, technician.id, spec.replicates, '50 mL PET jar, PP lid', 45, started ? new Date(`${spec.startDate}T08:00:00Z`) : null, lab.formulator.id, lab.formulator.id],
    );
    for (const lot of spec.lots) w.add('study_batches', 'study_id, batch_id, lab_id', [studyId, lot.id, lab.id]);
    const sas = spec.attributeCodes.map((code, position) => {
      const a = lab.attrs.get(code);
      if (!a) throw new Error(`No attribute ${code} in lab ${lab.id}`);
      const id = ids.sa++;
      w.add('study_attributes', 'id, lab_id, study_id, attribute_id, position, criterion', [id, lab.id, studyId, a.id, position, JSON.stringify(a.criterion)]);
      return { id, code, criterion: a.criterion };
    });
    const written: WrittenStudy = { id: studyId, samples: [], openCheckpoints: [], studyAttributes: sas.map((s) => ({ id: s.id, code: s.code })), observations: 0 };
    const method = (code: string) => (code === 'ph' ? '{"method":"neat"}' : code === 'viscosity' ? '{"spindle":"RV-6","speed":10,"temperature":25}' : null);
    const observe = (cpId: number, smp: { id: number; variantCode: string; replicate: number; lotId: number }, sa: (typeof sas)[number], v: Value, verdict: string, dueDate: string) => {
      w.add(
        'observations',
        'id, lab_id, study_id, sample_id, checkpoint_id, study_attribute_id, value_num, value_text, value_bool, method, verdict, recorded_by, recorded_at',
        [ids.obs++, lab.id, studyId, smp.id, cpId, sa.id, typeof v === 'number' ? v : null, typeof v === 'string' ? v : null, typeof v === 'boolean' ? v : null, method(sa.code), verdict, technician.id, new Date(`${dueDate}T10:30:00Z`)],
      );
      written.observations++;
    };
    let labelOrder = 0;
    const newSample = (scId: number | null, scIndex: number, lot: StudyLab['lots'][number], rep: number) => {
      const id = ids.sample++;
      const code = sampleCode(opts.samplePrefix, sampleNo++);
      w.add('samples', 'id, lab_id, study_id, batch_id, study_condition_id, code, replicate, label_order', [id, lab.id, studyId, lot.id, scId, code, rep, ++labelOrder]);
      written.samples.push({ id, code, scIndex });
      return { id, variantCode: lot.variantCode, replicate: rep, lotId: lot.id };
    };

    // As the app starts a study (server/services/study/start.ts): each batch's retained samples and one
    // initial test on the start date, then every condition's pulls paired with a same-day control reading.
    const calendar = studyCalendar(
      spec.startDate,
      spec.conditions.map((c, i) => ({ key: i, name: `condition ${i}`, role: c.role, kind: 'constant' as const, offsets: c.offsets.filter((o) => !isDayZero(o)) })),
    );
    // Conditions before samples: the writer flushes tables in the order they were first added.
    const scIds = spec.conditions.map(() => ids.sc++);
    for (const [ci, c] of spec.conditions.entries()) {
      w.add('study_conditions', 'id, lab_id, study_id, condition_id, role, position, offsets', [scIds[ci], lab.id, studyId, c.conditionId, c.role, ci, JSON.stringify(c.offsets.filter((o) => !isDayZero(o)))]);
    }
    const retained = spec.lots.flatMap((lot) => Array.from({ length: spec.replicates }, (_, r) => newSample(null, -1, lot, r + 1)));
    const initialId = ids.cp++;
    const init = calendar.initial;
    const initialInfo = { dueDate: init.dueDate, label: init.label, conditionIndex: -1 };
    const initialDue = spec.dueDate?.(initialInfo) ?? init.dueDate;
    const initialRecorded = spec.recorded ? spec.recorded(initialInfo) : initialDue < today;
    w.add(
      'checkpoints',
      'id, lab_id, study_id, study_condition_id, kind, control_checkpoint_id, offset_unit, offset_n, label, due_date, window_before, window_after, status, closed_at, closed_by',
      [initialId, lab.id, studyId, null, 'initial', null, 'day', 0, init.label, initialDue, init.windowBefore, init.windowAfter, initialRecorded ? 'done' : 'open', initialRecorded ? new Date(`${initialDue}T15:00:00Z`) : null, initialRecorded ? technician.id : null],
    );
    if (!initialRecorded) written.openCheckpoints.push({ id: initialId, scIndex: -1, dueDate: initialDue });
    /** Each batch's initial reading per attribute: the baseline of its change criteria. */
    const baselines = new Map<string, Value | undefined>();
    for (const smp of retained) {
      for (const sa of sas) {
        const v = spec.value(sa.code, { variantCode: smp.variantCode, role: 'initial', day: 0, replicate: smp.replicate, rand });
        if (v === undefined) continue;
        const key = `${smp.lotId}:${sa.id}`;
        if (!baselines.has(key)) baselines.set(key, v);
        if (initialRecorded) observe(initialId, smp, sa, v, evaluate(sa.criterion, v, undefined).verdict, initialDue);
      }
    }

    // The control's pulls first, so every other pull can name the control reading of its day.
    const order = calendar.conditions.map((c) => c.key).sort((a, b) => Number(b === calendar.controlKey) - Number(a === calendar.controlKey));
    const controlByDate = new Map<string, number>();
    for (const ci of order) {
      const c = spec.conditions[ci];
      const scId = scIds[ci];
      const samplesHere = spec.lots.flatMap((lot) => Array.from({ length: spec.replicates }, (_, r) => newSample(scId, ci, lot, r + 1)));
      for (const p of calendar.conditions.find((x) => x.key === ci)!.pulls) {
        const info = { dueDate: p.dueDate, label: p.label, conditionIndex: ci };
        const dueDate = spec.dueDate?.(info) ?? p.dueDate;
        const recorded = spec.recorded ? spec.recorded(info) : dueDate < today;
        const cpId = ids.cp++;
        const controlDate = 'controlDate' in p ? p.controlDate : null;
        const controlId = controlDate == null ? null : controlDate === spec.startDate ? initialId : (controlByDate.get(controlDate) ?? null);
        if (ci === calendar.controlKey) controlByDate.set(p.dueDate, cpId);
        w.add(
          'checkpoints',
          'id, lab_id, study_id, study_condition_id, kind, control_checkpoint_id, offset_unit, offset_n, label, due_date, window_before, window_after, status, closed_at, closed_by',
          [cpId, lab.id, studyId, scId, 'pull', controlId, p.offset.unit, p.offset.n, p.label, dueDate, p.windowBefore, p.windowAfter, recorded ? 'done' : 'open', recorded ? new Date(`${dueDate}T15:00:00Z`) : null, recorded ? technician.id : null],
        );
        if (!recorded) {
          written.openCheckpoints.push({ id: cpId, scIndex: ci, dueDate });
          continue;
        }
        const day = Math.round((Date.parse(p.dueDate) - Date.parse(spec.startDate)) / 86_400_000);
        for (const smp of samplesHere) {
          for (const sa of sas) {
            const v = spec.value(sa.code, { variantCode: smp.variantCode, role: c.role, day, replicate: smp.replicate, rand });
            if (v === undefined) continue;
            const base = baselines.get(`${smp.lotId}:${sa.id}`);
            observe(cpId, smp, sa, v, evaluate(sa.criterion, v, typeof base === 'number' ? base : undefined).verdict, dueDate);
          }
        }
      }
    }
    out.push(written);
  }
  await w.flush();
  return out;
}

/** Pull offsets in weeks (day 0 is the study's initial test, written by writeStudies). */
export const weeks = (...ns: number[]): PlanOffset[] => ns.map((n) => ({ unit: 'week' as const, n }));

/**
 * Invented values of an emulsion over time: variant A thins and separates when hot, later variants
 * hold better; pH drifts down, faster when hot; mass falls slowly through the pack; L*a*b* yellows a
 * little when hot.
 */
export function emulsionValue(code: string, c: CellInfo): Value | undefined {
  const w = c.day / 7;
  const hot = c.role === 'accelerated';
  const weak = c.variantCode === 'A';
  const noise = (k: number) => (c.rand() - 0.5) * k;
  switch (code) {
    case 'appearance':
    case 'texture':
      return hot && weak && w >= 8 ? 'marked' : hot && w >= 4 ? 'slight' : 'no_change';
    case 'color':
      return hot && w >= 8 ? 'slight' : 'no_change';
    case 'odor':
      return 'no_change';
    case 'separation':
      return hot && weak ? (w >= 8 ? 3 : w >= 4 ? 1 : 0) : 0;
    case 'ph':
      return Math.round((5.5 - (hot ? 0.03 : c.role === 'real_time' ? 0.012 : 0.002) * w + noise(0.06)) * 100) / 100;
    case 'viscosity':
      return Math.round(((weak ? 24000 : 27000) * (1 - (hot ? (weak ? 0.035 : 0.012) : 0.003) * w) + noise(600)) / 10) * 10;
    case 'mass':
      return Math.round((45.2 - (hot ? 0.04 : 0.01) * w + noise(0.02)) * 100) / 100;
    case 'color_l':
      return Math.round((88 - (hot ? 0.15 : 0.02) * w + noise(0.2)) * 100) / 100;
    case 'color_a':
      return Math.round((0.4 + (hot ? 0.02 : 0) * w + noise(0.1)) * 100) / 100;
    case 'color_b':
      return Math.round((9 + (hot ? 0.12 : 0.01) * w + noise(0.2)) * 100) / 100;
    case 'water_activity':
      return Math.round((0.93 + noise(0.01)) * 1000) / 1000;
    case 'pack_integrity':
      return true;
    default:
      return undefined;
  }
}

export { addDays };
