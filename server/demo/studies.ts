/**
 * Demo studies for the invented Larkspur lab, dated relative to the day the demo
 * is loaded, so the Bench has overdue, due and upcoming work, the charts have a
 * story (variant A separates at 45 °C by week 8 while B holds; pH drifts towards
 * its limit at 25 °C) and photos show the difference. Every value is invented.
 */
import { and, eq, inArray } from 'drizzle-orm';
import sharp from 'sharp';
import { randomBytes } from 'node:crypto';
import { evaluate, type Criterion } from '../../shared/compute/criteria';
import { addDays, localDateInZone, SCHEDULE_TEMPLATES, type Offset } from '../../shared/compute/schedule';
import type { ConditionRole } from '../../shared/domain';
import type { DbOrTx } from '../db/client';
import { photoKey, type FileStore } from '../files';
import {
  attributes,
  batches,
  checkpoints,
  decisions,
  notifications,
  observations,
  oosInvestigations,
  photos,
  storageConditions,
  studies,
  studyAttributes,
  studyBatches,
  studyResponsibles,
  studyConditions,
  submissions,
  variants,
} from '../db/schema';
import { audit } from '../services/audit';
import { takeSnapshot } from '../services/formulas';
import { materializeStudy } from '../services/studies';
import { studyDataHash } from '../services/reviews';
import { labelDating } from '../../shared/compute/label';
import { SIGNATURE_MEANINGS } from '../../shared/domain';

/** Small deterministic pseudo-random numbers (mulberry32), so the demo is the same every time. */
function rng(seed: number) {
  return () => {
    seed |= 0;
    seed = (seed + 0x6d2b79f5) | 0;
    let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

interface CellContext {
  variantCode: string;
  lotCode: string;
  role: ConditionRole;
  conditionName: string;
  setpointC: number | null;
  offset: Offset;
  /** Days since day 0. */
  day: number;
  replicate: number;
  rand: () => number;
}

type Value = number | string | boolean;

interface DemoStudySpec {
  title: string;
  productId: number;
  batchIds: number[];
  startDaysAgo: number;
  conditions: { conditionId: number; role: ConditionRole; template: keyof typeof SCHEDULE_TEMPLATES | null; offsets?: Offset[] }[];
  attributes: { code: string; criterion?: Criterion }[];
  /** The value for a cell, or undefined to leave it unrecorded. */
  value: (code: string, c: CellContext) => Value | undefined;
  /** Checkpoints (by condition index and label) left unrecorded on purpose. */
  leaveOpen?: { condition: number; label: string }[];
  responsibleId: number;
  containerDescription: string;
  fillGrams: number;
  notes: string;
}

export interface DemoPeople {
  owner: number;
  formulator: number;
  technician: number;
}

async function createDemoStudy(tx: DbOrTx, labId: number, timeZone: string, people: DemoPeople, spec: DemoStudySpec, seed: number, now: Date) {
  const rand = rng(seed);
  const today = localDateInZone(now, timeZone);
  const startDate = addDays(today, -spec.startDaysAgo);
  const [study] = await tx
    .insert(studies)
    .values({
      labId,
      productId: spec.productId,
      title: spec.title,
      status: 'running',
      startDate,
      responsibleId: spec.responsibleId,
      samplesPerCell: 1,
      containerDescription: spec.containerDescription,
      fillGrams: spec.fillGrams,
      notes: spec.notes,
      startedAt: new Date(`${startDate}T08:00:00Z`),
      startedBy: people.formulator,
      createdBy: people.formulator,
    })
    .$returningId();
  const studyId = study.id;
  await tx.insert(studyBatches).values(spec.batchIds.map((batchId) => ({ studyId, batchId, labId })));
  await tx.insert(studyResponsibles).values({ studyId, userId: spec.responsibleId, labId, position: 0 });

  const condRows = await tx
    .select()
    .from(storageConditions)
    .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, spec.conditions.map((c) => c.conditionId))));
  const attrRows = await tx
    .select()
    .from(attributes)
    .where(and(eq(attributes.labId, labId), inArray(attributes.code, spec.attributes.map((a) => a.code))));
  const batchRows = await tx
    .select({ id: batches.id, lotCode: batches.lotCode, variantCode: variants.code })
    .from(batches)
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .where(inArray(batches.id, spec.batchIds));

  const saIds: { id: number; code: string; criterion: Criterion; attr: (typeof attrRows)[number] }[] = [];
  for (const [position, a] of spec.attributes.entries()) {
    const attr = attrRows.find((r) => r.code === a.code)!;
    const criterion = a.criterion ?? attr.defaultCriterion ?? { kind: 'none' };
    const [{ id }] = await tx.insert(studyAttributes).values({ labId, studyId, attributeId: attr.id, position, criterion }).$returningId();
    saIds.push({ id, code: a.code, criterion, attr });
  }
  const scIds: number[] = [];
  for (const [ci, c] of spec.conditions.entries()) {
    const offsets = c.offsets ?? SCHEDULE_TEMPLATES[c.template!].offsets;
    const [{ id }] = await tx
      .insert(studyConditions)
      .values({ labId, studyId, conditionId: c.conditionId, role: c.role, position: ci, offsets, template: c.template })
      .$returningId();
    scIds.push(id);
  }

  // Samples and checkpoints exactly as starting a study makes them: the initial test, the pulls, the paired control readings.
  const made = await materializeStudy(tx, labId, { id: studyId, startDate, samplesPerCell: 1 });

  const photoTargets: { sampleId: number; checkpointId: number; separated: boolean; label: string; code: string; at: Date }[] = [];
  const initialValues = new Map<string, Value>();
  const failing: { observationId: number; sampleId: number; sampleCode: string; checkpointId: number; checkpointLabel: string; studyAttributeId: number; attributeName: string; value: Value; message: string; at: Date; variantCode: string; condition: string }[] = [];
  for (const cp of made.checkpoints) {
    const ci = cp.studyConditionId == null ? -1 : scIds.indexOf(cp.studyConditionId);
    const leftOpen = ci >= 0 && spec.leaveOpen?.some((l) => l.condition === ci && l.label === cp.label);
    // Recorded when its due date has come, unless left open on purpose.
    if (cp.dueDate > today || leftOpen) continue;
    const c = ci >= 0 ? spec.conditions[ci] : null;
    const cond = c ? condRows.find((r) => r.id === c.conditionId)! : null;
    const day = Math.round((Date.parse(cp.dueDate) - Date.parse(startDate)) / 86_400_000);
    for (const smp of made.samples.filter((x) => x.studyConditionId === cp.studyConditionId)) {
      const batch = batchRows.find((b) => b.id === smp.batchId)!;
      const ctx: CellContext = {
        variantCode: batch.variantCode,
        lotCode: batch.lotCode,
        // The initial test is read before storage: it is no condition's, and day 0 of every one.
        role: c?.role ?? 'control',
        conditionName: cond?.name ?? 'Initial test',
        setpointC: cond?.setpointC ?? null,
        offset: cp.offset as Offset,
        day,
        replicate: smp.replicate,
        rand,
      };
      const rows = [];
      for (const sa of saIds) {
        const v = spec.value(sa.code, ctx);
        if (v === undefined) continue;
        if (cp.kind === 'initial') initialValues.set(`${smp.batchId}:${sa.id}`, v);
        const baseline = cp.kind === 'initial' ? v : initialValues.get(`${smp.batchId}:${sa.id}`);
        const ev = evaluate(sa.criterion, v, typeof baseline === 'number' ? baseline : undefined, { name: sa.attr.name, unit: sa.attr.unit });
        rows.push({
          row: {
            labId,
            studyId,
            sampleId: smp.id,
            checkpointId: cp.id,
            studyAttributeId: sa.id,
            valueNum: typeof v === 'number' ? v : null,
            valueText: typeof v === 'string' ? v : null,
            valueBool: typeof v === 'boolean' ? v : null,
            method: sa.code === 'ph' ? { method: 'neat' } : sa.code === 'viscosity' ? { spindle: 'RV-6', speed: 10, temperature: 25 } : null,
            verdict: ev.verdict,
            recordedBy: people.technician,
            recordedAt: new Date(`${cp.dueDate}T10:${String(10 + (smp.id % 40)).padStart(2, '0')}:00Z`),
          },
          sa,
          v,
          message: ev.message,
        });
      }
      for (const r of rows) {
        const [{ id }] = await tx.insert(observations).values(r.row).$returningId();
        if (r.row.verdict === 'fail') {
          failing.push({ observationId: id, sampleId: smp.id, sampleCode: smp.code, checkpointId: cp.id, checkpointLabel: cp.label, studyAttributeId: r.sa.id, attributeName: r.sa.attr.name, value: r.v, message: r.message, at: r.row.recordedAt, variantCode: batch.variantCode, condition: cond?.name ?? 'Initial test' });
        }
      }
      const sep = rows.find((r) => r.sa.code === 'separation');
      if (cp.kind === 'initial' || (c?.role === 'accelerated' && (cp.label === 'Week 8' || cp.label === 'Week 4'))) {
        photoTargets.push({ sampleId: smp.id, checkpointId: cp.id, separated: Number(sep?.v ?? 0) >= 2, label: cp.label, code: batch.variantCode, at: new Date(`${cp.dueDate}T10:45:00Z`) });
      }
    }
    await tx.update(checkpoints).set({ status: 'done', closedAt: new Date(`${cp.dueDate}T15:00:00Z`), closedBy: people.technician }).where(eq(checkpoints.id, cp.id));
  }
  await audit(tx, {
    labId,
    userId: null,
    action: 'import',
    entity: 'study',
    entityId: studyId,
    newValue: { demo: true, title: spec.title },
    reason: 'Demo data (invented)',
  });
  return { studyId, photoTargets, failing, startDate };
}

/**
 * Every failing demo reading has its out-of-specification investigation, as the app would have opened
 * it. At 45 °C variant A's week-8 separation and appearance were confirmed at the bench and closed by
 * the formulator (the emulsion really split); its viscosity was re-measured and waits for her.
 */
async function demoInvestigations(tx: DbOrTx, labId: number, people: DemoPeople, study: Awaited<ReturnType<typeof createDemoStudy>>) {
  const [meta] = await tx.select({ title: studies.title }).from(studies).where(eq(studies.id, study.studyId));
  for (const f of study.failing) {
    const open = /viscosity/i.test(f.attributeName);
    const later = (hours: number) => new Date(f.at.getTime() + hours * 3_600_000);
    const [{ id }] = await tx
      .insert(oosInvestigations)
      .values({
        labId,
        studyId: study.studyId,
        observationId: f.observationId,
        sampleId: f.sampleId,
        checkpointId: f.checkpointId,
        studyAttributeId: f.studyAttributeId,
        failedValue: f.value,
        failedMessage: f.message.slice(0, 500),
        openedBy: people.technician,
        openedAt: f.at,
        ...(open
          ? {
              benchStep: 'remeasured' as const,
              remeasureValue: typeof f.value === 'number' ? f.value + 140 : f.value,
              remeasureVerdict: 'fail' as const,
              remeasuredBy: people.technician,
              remeasuredAt: later(0.3),
              benchComment: 'Re-measured with a fresh spindle after 10 min at 25 °C: still low.',
            }
          : {
              benchStep: 'confirmed' as const,
              benchComment: 'Checked the jar again: oil layer clearly visible, as recorded.',
              confirmedBy: people.technician,
              confirmedAt: later(0.2),
              status: 'closed' as const,
              checks: {
                instrument: 'Not an instrument reading (visual); the lamp and the viewing board were as usual.',
                method: 'Graded against the lab scale photos, as at every pull.',
                sample: 'Right jar (code on the lid and label), not disturbed before grading.',
                calculation: 'None (a grade).',
              },
              conclusion: 'confirmed' as const,
              conclusionReason: 'A real result: variant A separates at 45 °C by week 8; B, with xanthan, holds.',
              closedBy: people.formulator,
              closedAt: later(26),
            }),
      })
      .$returningId();
    await audit(tx, {
      labId,
      userId: null,
      action: 'import',
      entity: 'oos_investigation',
      entityId: id,
      studyId: study.studyId,
      newValue: { demo: true, sample: f.sampleCode, checkpoint: f.checkpointLabel, attribute: f.attributeName, value: f.value, open },
      reason: 'Demo data (invented)',
    });
    await tx.insert(notifications).values({
      labId,
      userId: people.formulator,
      kind: 'oos',
      text: `Out of specification in ${meta.title}: ${f.sampleCode} ${f.checkpointLabel}, ${f.message}`.slice(0, 500),
      link: `/studies/${study.studyId}?tab=investigations`,
      studyId: study.studyId,
      createdAt: f.at,
      readAt: open ? null : later(25),
    });
  }
}

/** A generated picture of an open jar seen from above: cream, or cream with an oil layer. */
export async function jarPhoto(separated: boolean, seed: number): Promise<Buffer> {
  const r = rng(seed);
  const swirl = Array.from({ length: 5 }, (_, i) => {
    const rx = 120 - i * 20 + r() * 6;
    return `<ellipse cx="${320 + r() * 10}" cy="${240 + r() * 10}" rx="${rx}" ry="${rx * 0.9}" fill="none" stroke="#efe6d2" stroke-width="5"/>`;
  }).join('');
  const oil = separated
    ? `<path d="M215 170 C 260 130, 380 140, 430 190 C 440 230, 400 250, 360 235 C 320 220, 260 250, 225 225 Z" fill="#e3c25d" fill-opacity="0.75"/>
       <circle cx="410" cy="300" r="14" fill="#e3c25d" fill-opacity="0.8"/><circle cx="250" cy="320" r="9" fill="#e3c25d" fill-opacity="0.8"/>`
    : '';
  const svg = `<svg xmlns="http://www.w3.org/2000/svg" width="640" height="480">
    <rect width="640" height="480" fill="#d9dcd6"/>
    <circle cx="320" cy="240" r="205" fill="#8c9a9c"/>
    <circle cx="320" cy="240" r="185" fill="#fbf6ea"/>
    ${swirl}${oil}
  </svg>`;
  return sharp(Buffer.from(svg)).jpeg({ quality: 82 }).toBuffer();
}

/**
 * Three running studies at different ages for the Larkspur lab. `conditions`
 * maps storage preset keys to the lab's condition ids; `batchIds` are the demo
 * catalogue's batches (CHC-A jar, CHC-B jar, CHC-B tube, SWB-A jar).
 */
export async function seedStudies(
  tx: DbOrTx,
  labId: number,
  timeZone: string,
  people: DemoPeople,
  catalogue: { products: { handCream: number; bodyButter: number }; variants: { handCreamA: number }; batches: number[] },
  conditions: Record<string, number>,
  files: FileStore,
  now = new Date(),
): Promise<number[]> {
  const today = localDateInZone(now, timeZone);
  // An older pilot lot of variant A for the long real-time study (invented).
  const pilotRecorded = new Date(`${addDays(today, -400)}T16:00:00Z`);
  const [{ id: oldLot }] = await tx
    .insert(batches)
    .values({
      labId,
      variantId: catalogue.variants.handCreamA,
      lotCode: `CHC-A-PILOT-${addDays(today, -400).slice(2, 4)}`,
      madeOn: addDays(today, -400),
      sizeGrams: 1000,
      packaging: '50 mL PET jar, PP lid',
      fillAmount: 50,
      fillUnit: 'mL',
      notes: 'First pilot lot, kept for the real-time study.',
      // The formula as it was when the lot was made (variant A has not changed since, in the demo).
      formulaSnapshot: await takeSnapshot(tx, labId, catalogue.variants.handCreamA, pilotRecorded),
      createdBy: people.formulator,
      createdAt: pilotRecorded,
    })
    .$returningId();
  await audit(tx, { labId, userId: null, action: 'import', entity: 'batch', entityId: oldLot, newValue: { demo: true, note: 'pilot lot of variant A' }, reason: 'Demo data (invented)' });

  const emulsion = (code: string, c: CellContext): Value | undefined => {
    const weeks = c.day / 7;
    const hot = c.role === 'accelerated';
    const isA = c.variantCode === 'A';
    switch (code) {
      case 'separation':
        if (hot && isA) return weeks >= 8 ? 3 : weeks >= 4 ? 1 : 0;
        return 0;
      case 'appearance':
        return hot && isA && weeks >= 8 ? 'marked' : hot && weeks >= 4 ? 'slight' : 'no_change';
      case 'color':
        return hot && weeks >= 8 ? 'slight' : 'no_change';
      case 'odor':
        return 'no_change';
      case 'texture':
        return hot && isA && weeks >= 4 ? 'slight' : 'no_change';
      case 'ph': {
        const drift = hot ? 0.035 * weeks : c.role === 'real_time' ? 0.01 * weeks : 0.002 * weeks;
        return Math.round((5.52 - drift + (c.rand() - 0.5) * 0.06) * 100) / 100;
      }
      case 'viscosity': {
        const base = isA ? 24000 : 27000;
        const loss = hot ? (isA ? 0.035 : 0.012) * weeks : 0.003 * weeks;
        return Math.round((base * (1 - loss) + (c.rand() - 0.5) * 600) / 10) * 10;
      }
      default:
        return undefined;
    }
  };

  const s1 = await createDemoStudy(
    tx,
    labId,
    timeZone,
    people,
    {
      title: 'Calendula hand cream A vs B: accelerated and freeze-thaw',
      productId: catalogue.products.handCream,
      batchIds: [catalogue.batches[0], catalogue.batches[1]],
      startDaysAgo: 60,
      conditions: [
        { conditionId: conditions['fridge-4'], role: 'control', template: 'accelerated-12w' },
        { conditionId: conditions['oven-45'], role: 'accelerated', template: 'accelerated-12w' },
        { conditionId: conditions['ich-25-60'], role: 'real_time', template: 'real-time-36m' },
        { conditionId: conditions['freeze-thaw'], role: 'stress', template: 'freeze-thaw-5' },
      ],
      attributes: ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity'].map((code) => ({ code })),
      value: emulsion,
      leaveOpen: [{ condition: 0, label: 'Week 8' }],
      responsibleId: people.technician,
      containerDescription: '50 mL PET jar, PP lid, filled to 45 g',
      fillGrams: 45,
      notes: 'Does the added xanthan in B stop the thinning and separation seen in A at 45 °C?',
    },
    11,
    now,
  );

  await demoInvestigations(tx, labId, people, s1);

  await createDemoStudy(
    tx,
    labId,
    timeZone,
    people,
    {
      title: 'Calendula hand cream A: real time at 25 °C',
      productId: catalogue.products.handCream,
      batchIds: [oldLot],
      startDaysAgo: 380,
      conditions: [
        { conditionId: conditions['fridge-4'], role: 'control', template: null, offsets: [{ unit: 'month', n: 6 }, { unit: 'month', n: 12 }, { unit: 'month', n: 24 }] },
        { conditionId: conditions['ich-25-60'], role: 'real_time', template: 'real-time-36m' },
      ],
      attributes: [{ code: 'appearance' }, { code: 'odor' }, { code: 'separation' }, { code: 'ph' }],
      value: (code, c) => {
        if (code === 'ph') {
          // Drifts down about 0.03 pH a month at 25 °C: towards the lower limit of 5.0 (day 0 5.5 - 0.5).
          const months = c.day / 30.4375;
          const rate = c.role === 'real_time' ? 0.03 : 0.005;
          return Math.round((5.5 - rate * months + (c.rand() - 0.5) * 0.05) * 100) / 100;
        }
        return code === 'separation' ? 0 : 'no_change';
      },
      responsibleId: people.technician,
      containerDescription: '50 mL PET jar, PP lid',
      fillGrams: 45,
      notes: 'Long-term data for the first pilot lot.',
    },
    23,
    now,
  );

  await createDemoStudy(
    tx,
    labId,
    timeZone,
    people,
    {
      title: 'Shea whipped body butter: first look',
      productId: catalogue.products.bodyButter,
      batchIds: [catalogue.batches[3]],
      startDaysAgo: 14,
      conditions: [
        // Weekly for four weeks beside the light test, without calling them light schedules.
        { conditionId: conditions['fridge-4'], role: 'control', template: null, offsets: SCHEDULE_TEMPLATES['light-4w'].offsets },
        { conditionId: conditions['ich-40-75'], role: 'accelerated', template: null, offsets: SCHEDULE_TEMPLATES['light-4w'].offsets },
        { conditionId: conditions['window-daylight'], role: 'stress', template: 'light-4w' },
      ],
      attributes: [
        { code: 'appearance' },
        { code: 'color' },
        { code: 'odor' },
        { code: 'texture' },
        { code: 'ph' },
        { code: 'pack_integrity' },
      ],
      value: (code, c) => {
        if (code === 'ph') return Math.round((5.8 + (c.rand() - 0.5) * 0.1) * 100) / 100;
        if (code === 'pack_integrity') return true;
        if (code === 'color' && c.conditionName.toLowerCase().includes('daylight') && c.day >= 7) return 'slight';
        if (code === 'texture' && c.role === 'accelerated' && c.day >= 7) return 'slight';
        return 'no_change';
      },
      leaveOpen: [{ condition: 1, label: 'Week 2' }, { condition: 2, label: 'Week 2' }],
      responsibleId: people.technician,
      containerDescription: '100 g amber glass jar',
      fillGrams: 90,
      notes: 'pH read on a 10 % dispersion in water (anhydrous product).',
    },
    37,
    now,
  );

  // A finished example: the pilot lot's 12-week accelerated study, submitted and signed.
  const s4 = await createDemoStudy(
    tx,
    labId,
    timeZone,
    people,
    {
      title: 'Calendula hand cream A pilot: 12 weeks accelerated',
      productId: catalogue.products.handCream,
      batchIds: [oldLot],
      startDaysAgo: 390,
      conditions: [
        { conditionId: conditions['fridge-4'], role: 'control', template: 'accelerated-12w' },
        { conditionId: conditions['ich-40-75'], role: 'accelerated', template: 'accelerated-12w' },
        { conditionId: conditions['freeze-thaw'], role: 'stress', template: 'freeze-thaw-5' },
      ],
      attributes: ['appearance', 'odor', 'separation', 'ph'].map((code) => ({ code })),
      value: (code, c) => {
        if (code === 'ph') return Math.round((5.5 - (c.role === 'accelerated' ? 0.02 : 0.004) * (c.day / 7) + (c.rand() - 0.5) * 0.04) * 100) / 100;
        if (code === 'separation') return c.role === 'stress' && c.offset.n >= 5 ? 1 : 0;
        return 'no_change';
      },
      responsibleId: people.technician,
      containerDescription: '50 mL PET jar, PP lid',
      fillGrams: 45,
      notes: 'Screening study of the first pilot lot.',
    },
    53,
    now,
  );
  await tx.update(studies).set({ status: 'decided' }).where(eq(studies.id, s4.studyId));
  const submittedAt = new Date(now.getTime() - 290 * 86_400_000);
  const [{ id: submissionId }] = await tx
    .insert(submissions)
    .values({
      labId,
      studyId: s4.studyId,
      summary: 'All attributes held for 12 weeks at 40 °C / 75 % RH and through 5 freeze-thaw cycles (a faint sheen after cycle 5). Proposing 12 months, protect from freezing, pending real-time data.',
      proposals: [{ variantId: catalogue.variants.handCreamA, shelfLifeMonths: 12, paoMonths: 6 }],
      submittedBy: people.formulator,
      submittedAt,
    })
    .$returningId();
  const ld = labelDating({ shelfLifeMonths: 12, madeDate: addDays(today, -400), periodAfterOpeningMonths: 6 });
  await tx.insert(decisions).values({
    labId,
    studyId: s4.studyId,
    variantId: catalogue.variants.handCreamA,
    submissionId,
    outcome: 'released_with_conditions',
    conditionsText: 'Protect from freezing.',
    shelfLifeMonths: 12,
    paoMonths: 6,
    labelRule: ld.rule,
    labelText: ld.text,
    comment: 'Release the pilot lot for the market test only; confirm with the real-time study.',
    signedBy: people.owner,
    signerName: 'Maya Lindqvist',
    signedAt: new Date(submittedAt.getTime() + 2 * 86_400_000),
    meaning: SIGNATURE_MEANINGS.released_with_conditions,
    dataHash: await studyDataHash(tx, labId, s4.studyId),
  });

  // Generated photos of the 45 °C jars at day 0, week 4 and week 8.
  for (const [i, p] of s1.photoTargets.entries()) {
    const img = await jarPhoto(p.separated, 100 + i);
    const meta = await sharp(img).metadata();
    const thumb = await sharp(img).resize({ width: 360 }).webp({ quality: 78 }).toBuffer();
    const base = randomBytes(16).toString('hex');
    await files.put(photoKey(`${base}.jpg`), img, { contentType: 'image/jpeg' });
    await files.put(photoKey(`${base}.thumb.webp`), thumb, { contentType: 'image/webp' });
    await tx.insert(photos).values({
      labId,
      studyId: s1.studyId,
      sampleId: p.sampleId,
      checkpointId: p.checkpointId,
      storedName: `${base}.jpg`,
      thumbName: `${base}.thumb.webp`,
      mime: 'image/jpeg',
      bytes: img.length,
      width: meta.width ?? 640,
      height: meta.height ?? 480,
      originalName: `variant-${p.code}-${p.label.toLowerCase().replace(' ', '-')}.jpg`,
      caption: p.separated ? 'Oil layer on the surface' : null,
      uploadedBy: people.technician,
      // Taken at the bench with the readings of that checkpoint.
      uploadedAt: p.at,
    });
  }
  return [s1.studyId, s4.studyId];
}
