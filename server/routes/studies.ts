import { and, asc, eq } from 'drizzle-orm';
import { Router } from 'express';
import { z } from 'zod';
import { SCHEDULE_TEMPLATES } from '../../shared/compute/schedule';
import { STUDY_STATUSES } from '../../shared/domain';
import {
  amendmentInput,
  attributeInput,
  benchQuery,
  missedInput,
  sampleCodeParams,
  studyPlanInput,
} from '../../shared/schemas/studies';
import { requireMember, requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import {
  attributes,
  batches,
  checkpoints,
  products,
  storageConditions,
  users,
  variants,
} from '../db/schema';
import { conflict, idParam, notFound, parse } from '../http/errors';
import { audit } from '../services/audit';
import { findProduct } from '../services/formulas';
import { analyzeStudy } from '../services/analysis';
import { labelSheet, sampleDue, samplePage } from '../services/study/samples';
import { attributeView } from '../services/records';
import {
  amendStudy,
  bench,
  checkPlan,
  cycleHoursOf,
  listStudies,
  markMissed,
  previewPlan,
  savePlan,
  startStudy,
  studyDetail,
  todayIn,
  type Actor,
} from '../services/studies';

const actorOf = (u: Express.User): Actor => ({ id: u.id, labId: u.labId, timeZone: u.lab.timeZone });

/** An attribute as the API shows it (the same shape the Record sheet uses). */
const toAttribute = attributeView;

/** Suggested role of a template, for the plan builder. */
const TEMPLATE_ROLES: Record<string, string> = {
  'accelerated-12w': 'accelerated',
  'freeze-thaw-5': 'stress',
  'real-time-36m': 'real_time',
  'light-4w': 'stress',
  centrifuge: 'stress',
};

/** Mounted at /api: attributes, studies, samples, checkpoints, the Bench. */
export function studyRoutes(db: Db): Router {
  const r = Router();
  const formulator = requireRole('formulator');

  // ---------------------------------------------------------------- attributes
  r.get('/attributes', requireMember, async (req, res) => {
    const me = member(req);
    const rows = await db.select().from(attributes).where(eq(attributes.labId, me.labId)).orderBy(asc(attributes.id));
    res.json({ attributes: rows.map(toAttribute) });
  });

  r.post('/attributes', formulator, async (req, res) => {
    const me = member(req);
    const input = parse(attributeInput, req.body);
    const created = await db.transaction(async (tx) => {
      const [dupe] = await tx
        .select({ id: attributes.id })
        .from(attributes)
        .where(and(eq(attributes.labId, me.labId), eq(attributes.code, input.code)));
      if (dupe) throw conflict('Your lab already has an attribute with this code', { code: 'Already in use' });
      const [{ id }] = await tx
        .insert(attributes)
        .values({
          labId: me.labId,
          code: input.code,
          name: input.name,
          kind: input.kind,
          unit: input.unit ?? null,
          decimals: input.decimals,
          scale: input.scale ?? null,
          methodFields: input.methodFields ?? null,
          physicalMin: input.physicalMin ?? null,
          physicalMax: input.physicalMax ?? null,
          defaultCriterion: input.defaultCriterion ?? { kind: 'none' },
          description: input.description ?? null,
        })
        .$returningId();
      await audit(tx, { labId: me.labId, userId: me.id, action: 'create', entity: 'attribute', entityId: id, newValue: input });
      const [row] = await tx.select().from(attributes).where(eq(attributes.id, id));
      return row;
    });
    res.status(201).json({ attribute: toAttribute(created) });
  });

  r.patch('/attributes/:id', formulator, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(z.strictObject({ active: z.boolean() }), req.body);
    const row = await db.transaction(async (tx) => {
      const [before] = await tx
        .select()
        .from(attributes)
        .where(and(eq(attributes.labId, me.labId), eq(attributes.id, id)))
        .for('update');
      if (!before) throw notFound('No such attribute in your lab');
      await tx.update(attributes).set({ active: input.active }).where(eq(attributes.id, id));
      await audit(tx, {
        labId: me.labId,
        userId: me.id,
        action: 'update',
        entity: 'attribute',
        entityId: id,
        oldValue: { active: before.active },
        newValue: { active: input.active },
      });
      return { ...before, active: input.active };
    });
    res.json({ attribute: toAttribute(row) });
  });

  // ---------------------------------------------------------------- plan builder options
  r.get('/studies/options', requireMember, async (req, res) => {
    const me = member(req);
    const productId = req.query.productId ? idParam(req.query.productId) : null;
    // Another lab's product (or an unknown one) is not found, as everywhere else.
    if (productId !== null) await findProduct(db, me.labId, productId);
    const [productRows, batchRows, conditionRows, attributeRows, memberRows] = await Promise.all([
      db.select({ id: products.id, name: products.name, type: products.type }).from(products).where(eq(products.labId, me.labId)).orderBy(asc(products.name)),
      productId
        ? db
            .select({ b: batches, v: { id: variants.id, code: variants.code, name: variants.name } })
            .from(batches)
            .innerJoin(variants, eq(variants.id, batches.variantId))
            .where(and(eq(batches.labId, me.labId), eq(variants.productId, productId)))
            .orderBy(asc(variants.code), asc(batches.lotCode))
        : Promise.resolve([]),
      db.select().from(storageConditions).where(eq(storageConditions.labId, me.labId)).orderBy(asc(storageConditions.name)),
      db.select().from(attributes).where(and(eq(attributes.labId, me.labId), eq(attributes.active, true))).orderBy(asc(attributes.id)),
      db
        .select({ id: users.id, name: users.name, role: users.role })
        .from(users)
        .where(and(eq(users.labId, me.labId), eq(users.active, true)))
        .orderBy(asc(users.name)),
    ]);
    res.json({
      products: productRows,
      batches: batchRows.map(({ b, v }) => ({ id: b.id, lotCode: b.lotCode, madeOn: b.madeOn, packaging: b.packaging, variant: v })),
      conditions: conditionRows.map((c) => ({
        id: c.id,
        name: c.name,
        kind: c.kind,
        location: c.location,
        isControl: c.isControl,
        setpointC: c.setpointC,
        rhPercent: c.rhPercent,
        cycleHours: cycleHoursOf(c),
        active: c.active,
      })),
      attributes: attributeRows.map(toAttribute),
      members: memberRows,
      templates: Object.values(SCHEDULE_TEMPLATES).map((t) => ({ id: t.id, label: t.label, offsets: t.offsets, suggestedRole: TEMPLATE_ROLES[t.id] })),
    });
  });

  // ---------------------------------------------------------------- studies
  r.get('/studies', requireMember, async (req, res) => {
    const me = member(req);
    const { status } = parse(z.strictObject({ status: z.enum(STUDY_STATUSES).optional() }), req.query, 'query');
    res.json({ studies: await listStudies(db, me.labId, todayIn(me.lab.timeZone), status) });
  });

  r.post('/studies/preview', formulator, async (req, res) => {
    const me = member(req);
    const plan = parse(studyPlanInput, req.body);
    const checked = await checkPlan(db, me.labId, plan);
    res.json({ preview: previewPlan(plan, checked) });
  });

  r.post('/studies', formulator, async (req, res) => {
    const me = member(req);
    const plan = parse(studyPlanInput, req.body);
    const id = await savePlan(db, actorOf(me), plan);
    res.status(201).json({ study: await studyDetail(db, me.labId, id, todayIn(me.lab.timeZone)) });
  });

  r.get('/studies/:id', requireMember, async (req, res) => {
    const me = member(req);
    res.json({ study: await studyDetail(db, me.labId, idParam(req.params.id), todayIn(me.lab.timeZone)) });
  });

  r.put('/studies/:id', formulator, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const plan = parse(studyPlanInput, req.body);
    await savePlan(db, actorOf(me), plan, id);
    res.json({ study: await studyDetail(db, me.labId, id, todayIn(me.lab.timeZone)) });
  });

  r.post('/studies/:id/start', formulator, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    parse(z.strictObject({}), req.body);
    await startStudy(db, actorOf(me), id);
    res.json({ study: await studyDetail(db, me.labId, id, todayIn(me.lab.timeZone)) });
  });

  r.post('/studies/:id/amendments', formulator, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(amendmentInput, req.body);
    await amendStudy(db, actorOf(me), id, input);
    res.status(201).json({ study: await studyDetail(db, me.labId, id, todayIn(me.lab.timeZone)) });
  });

  r.post('/checkpoints/:id/missed', requireMember, async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const { reason } = parse(missedInput, req.body);
    const today = todayIn(me.lab.timeZone);
    await markMissed(db, actorOf(me), id, reason, today);
    const [cp] = await db.select({ studyId: checkpoints.studyId }).from(checkpoints).where(eq(checkpoints.id, id));
    const detail = await studyDetail(db, me.labId, cp.studyId, today);
    res.json({ checkpoint: detail.checkpoints.find((c) => c.id === id) });
  });

  r.get('/bench', requireMember, async (req, res) => {
    const me = member(req);
    const q = parse(benchQuery, req.query, 'query');
    res.json(await bench(db, me.labId, q.today ?? todayIn(me.lab.timeZone), q.days, me.id));
  });

  r.get('/studies/:id/analysis', formulator, async (req, res) => {
    const me = member(req);
    const q = parse(z.strictObject({ q10: z.coerce.number().gt(0, 'Q10 must be more than 0').max(10, 'Q10 above 10 is not plausible').optional() }), req.query, 'query');
    // Without ?q10 the lab's own setting, read with the study.
    res.json({ analysis: await analyzeStudy(db, me.labId, idParam(req.params.id), todayIn(me.lab.timeZone), q.q10) });
  });

  // ---------------------------------------------------------------- labels and samples
  r.get('/studies/:id/labels', requireMember, async (req, res) => {
    const me = member(req);
    res.json(await labelSheet(db, me.labId, idParam(req.params.id), `${req.protocol}://${req.get('host')}`));
  });

  // What a scanned or typed code opens at the bench (its due checkpoint); unknown and another lab's: 404.
  r.get('/samples/:code/due', requireMember, async (req, res) => {
    const me = member(req);
    const { code } = parse(sampleCodeParams, { code: req.params.code }, 'path');
    res.json({ due: await sampleDue(db, me.labId, code, todayIn(me.lab.timeZone)) });
  });

  r.get('/samples/:code', requireMember, async (req, res) => {
    const me = member(req);
    res.json({ sample: await samplePage(db, me.labId, String(req.params.code), todayIn(me.lab.timeZone)) });
  });

  return r;
}
