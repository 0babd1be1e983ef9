import { and, asc, eq } from 'drizzle-orm';
import { Router } from 'express';
import { csvLine } from '../../shared/csv';
import { decisionInput, submitInput } from '../../shared/schemas/reviews';
import { requireRole } from '../auth/guards';
import { member } from '../auth/session-user';
import type { Db } from '../db/client';
import type { FileStore } from '../files';
import { attributes, batches, checkpoints, observations, samples, storageConditions, studies, studyAttributes, studyConditions, users, variants } from '../db/schema';
import { idParam, notFound, parse } from '../http/errors';
import type { Logger } from '../log';
import { decide, decidedStudies, reviewOf, reviewQueue, submitStudy } from '../services/reviews';
import { valueOf } from '../services/records';
import { studyReportPdf } from '../services/report';
import { todayIn } from '../services/studies';

/** Mounted at /api: submitting for review, the owner's queue and signed decisions, the observations export. */
export function reviewRoutes(db: Db, log: Logger, files: FileStore): Router {
  const r = Router();

  r.get('/studies/:id/report.pdf', requireRole('technician'), async (req, res) => {
    const me = member(req);
    const pdf = await studyReportPdf(db, me.labId, idParam(req.params.id), todayIn(me.lab.timeZone), files);
    res.set({ 'Content-Type': 'application/pdf', 'Content-Disposition': `inline; filename="stability-report-${req.params.id}.pdf"` });
    res.send(pdf);
  });

  r.post('/studies/:id/submit', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    await submitStudy(db, me, id, parse(submitInput, req.body));
    res.json({ review: await reviewOf(db, me.labId, id) });
  });

  /** The owner's Reviews page: the queue (in review, oldest submission first) and the decided studies (latest decision first). */
  r.get('/reviews', requireRole('owner'), async (req, res) => {
    const labId = member(req).labId;
    const [queue, decided] = await Promise.all([reviewQueue(db, labId), decidedStudies(db, labId)]);
    res.json({ queue, decided });
  });

  r.get('/studies/:id/review', requireRole('formulator'), async (req, res) => {
    const me = member(req);
    res.json({ review: await reviewOf(db, me.labId, idParam(req.params.id)) });
  });

  r.post('/studies/:id/decisions', requireRole('owner'), async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const input = parse(decisionInput, req.body);
    const decisionId = await decide(db, log, me, id, input);
    res.status(201).json({ decisionId, review: await reviewOf(db, me.labId, id) });
  });

  /** Every observation of a study in long format: one row per sample, checkpoint and attribute. */
  r.get('/studies/:id/observations.csv', requireRole('technician'), async (req, res) => {
    const me = member(req);
    const id = idParam(req.params.id);
    const [study] = await db.select({ id: studies.id, title: studies.title }).from(studies).where(and(eq(studies.labId, me.labId), eq(studies.id, id)));
    if (!study) throw notFound('No such study in your lab');
    const rows = await db
      .select({
        o: observations,
        sample: samples.code,
        variant: variants.code,
        lot: batches.lotCode,
        condition: storageConditions.name,
        checkpoint: checkpoints.label,
        due: checkpoints.dueDate,
        attr: attributes,
        who: users.name,
      })
      .from(observations)
      .innerJoin(samples, eq(samples.id, observations.sampleId))
      .innerJoin(batches, eq(batches.id, samples.batchId))
      .innerJoin(variants, eq(variants.id, batches.variantId))
      // A retained sample of the initial test is in no condition.
      .leftJoin(studyConditions, eq(studyConditions.id, samples.studyConditionId))
      .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
      .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
      .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
      .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
      .innerJoin(users, eq(users.id, observations.recordedBy))
      .where(and(eq(observations.labId, me.labId), eq(observations.studyId, id)))
      .orderBy(asc(samples.labelOrder), asc(checkpoints.dueDate), asc(studyAttributes.position));
    const name = study.title.replace(/[^A-Za-z0-9]+/g, '-').replace(/^-|-$/g, '').slice(0, 60) || 'study';
    res.set({ 'Content-Type': 'text/csv; charset=utf-8', 'Content-Disposition': `attachment; filename="${name}-observations.csv"` });
    res.write('sample,variant,lot,condition,checkpoint,due_date,attribute,unit,value,verdict,not_done_reason,method,version,voided,recorded_by,recorded_at_utc\r\n');
    for (const x of rows) {
      res.write(
        csvLine([x.sample, x.variant, x.lot, x.condition ?? 'Initial test', x.checkpoint, x.due, x.attr.code, x.attr.unit, valueOf(x.attr.kind, x.o), x.o.verdict, x.o.notDoneReason, x.o.method, x.o.version, x.o.voided, x.who, x.o.recordedAt.toISOString()]),
      );
    }
    res.end();
  });

  return r;
}
