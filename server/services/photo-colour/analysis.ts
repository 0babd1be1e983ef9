/**
 * ΔE00 from photos for the analysis chart and the report: per stored sample, each marked photo against
 * its batch's initial photo. A checkpoint where the sample has an instrument ΔE (L*, a*, b* readings)
 * keeps the instrument's point only: instrument readings win over the photo estimate.
 */
import { and, eq } from 'drizzle-orm';
import type { DeltaESeries } from '../../../shared/schemas/analysis';
import { daysBetween } from '../../../shared/compute/schedule';
import { DAYS_PER_MONTH } from '../../../shared/compute/suggest';
import type { DbOrTx } from '../../db/client';
import { batches, checkpoints, samples } from '../../db/schema';
import { studyPhotoDeltaE } from './marks';

export async function photoDeltaESeries(db: DbOrTx, labId: number, studyId: number, startDate: string, instrument: DeltaESeries[]): Promise<DeltaESeries[]> {
  const marks = await studyPhotoDeltaE(db, labId, studyId);
  if (!marks.length) return [];
  const cps = await db.select().from(checkpoints).where(and(eq(checkpoints.labId, labId), eq(checkpoints.studyId, studyId)));
  const smp = await db
    .select({ id: samples.id, code: samples.code, sc: samples.studyConditionId, batchId: samples.batchId, variantId: batches.variantId })
    .from(samples)
    .innerJoin(batches, eq(batches.id, samples.batchId))
    .where(and(eq(samples.labId, labId), eq(samples.studyId, studyId)));
  const cpById = new Map(cps.map((c) => [c.id, c]));
  const monthsOf = (c: (typeof cps)[number]) => (c.kind === 'initial' ? 0 : c.offsetUnit === 'month' ? c.offsetN : daysBetween(startDate, c.dueDate) / DAYS_PER_MONTH);
  const out: DeltaESeries[] = [];
  for (const s of smp.filter((x) => x.sc !== null)) {
    const retained = new Set(smp.filter((x) => x.sc === null && x.batchId === s.batchId).map((x) => x.id));
    const own = marks.filter((m) => m.sampleId === s.id || (retained.has(m.sampleId) && cpById.get(m.checkpointId)?.kind === 'initial'));
    const inst = instrument.find((d) => d.sampleCode === s.code);
    const points = own
      .map((m) => {
        const cp = cpById.get(m.checkpointId)!;
        return { label: cp.label, months: monthsOf(cp), de76: null, de00: m.deltaE };
      })
      .filter((p) => !inst?.points.some((q) => q.label === p.label && q.de00 !== null))
      // One point per checkpoint: the mean of its photos.
      .reduce<{ label: string; months: number; de76: null; de00: number | null; n: number }[]>((acc, p) => {
        const same = acc.find((x) => x.label === p.label);
        if (!same) acc.push({ ...p, n: p.de00 === null ? 0 : 1 });
        else if (p.de00 !== null) {
          same.de00 = ((same.de00 ?? 0) * same.n + p.de00) / (same.n + 1);
          same.n++;
        }
        return acc;
      }, [])
      .sort((a, b) => a.months - b.months)
      .map(({ n: _n, ...p }) => ({ ...p, de00: p.de00 === null ? null : Math.round(p.de00 * 100) / 100 }));
    if (points.some((p) => p.months > 0)) out.push({ variantId: s.variantId, studyConditionId: s.sc!, sampleCode: s.code, source: 'photo', points });
  }
  return out;
}
