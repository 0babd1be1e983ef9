/**
 * The checks a study plan and a whole-study template share: each condition and attribute is the lab's,
 * its checkpoints fit the condition, its criterion fits the attribute, and nothing is listed twice.
 * Messages go into `fields` under `prefix` (a plan's fields are "conditions.0...", a template's
 * "plan.conditions.0..."), so the form shows each one beside its field.
 */
import { and, eq, inArray } from 'drizzle-orm';
import { CRITERION_KINDS_BY_ATTRIBUTE } from '../../../shared/compute/criteria';
import { dayZeroAllowed, isDayZero } from '../../../shared/compute/study-calendar';
import type { StudyPlanInput } from '../../../shared/schemas/studies';
import type { DbOrTx } from '../../db/client';
import { attributes, storageConditions } from '../../db/schema';
import { cycleHoursOf } from './common';

/** The index of the first entry that repeats an earlier one, or -1. */
export const firstRepeat = (ids: (number | string)[]) => ids.findIndex((v, i) => ids.indexOf(v) !== i);

type PlanParts = Pick<StudyPlanInput, 'conditions' | 'attributes'>;

export async function checkConditionsAndAttributes(
  db: DbOrTx,
  labId: number,
  plan: PlanParts,
  fields: Record<string, string>,
  opts: { prefix: string; inUseOnly: boolean },
): Promise<{ conditionRows: (typeof storageConditions.$inferSelect)[]; attributeRows: (typeof attributes.$inferSelect)[] }> {
  const p = opts.prefix;
  const conditionIds = plan.conditions.map((c) => c.conditionId);
  const conditionRows = await db
    .select()
    .from(storageConditions)
    .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, conditionIds)));
  plan.conditions.forEach((pc, i) => {
    const row = conditionRows.find((c) => c.id === pc.conditionId);
    if (!row) {
      fields[`${p}conditions.${i}.conditionId`] = 'No such storage condition in your lab';
      return;
    }
    if (opts.inUseOnly && !row.active) fields[`${p}conditions.${i}.conditionId`] = 'This storage condition is no longer in use';
    const cycleHours = cycleHoursOf(row);
    pc.offsets.forEach((o, j) => {
      if (o.unit === 'cycle' && cycleHours == null) {
        fields[`${p}conditions.${i}.offsets.${j}.unit`] = 'Cycle checkpoints need a cycling condition (freeze-thaw)';
      } else if (isDayZero(o) && !dayZeroAllowed(row.kind)) {
        fields[`${p}conditions.${i}.offsets.${j}`] = 'Day 0 is the initial test, done once per batch for the whole study: remove it here';
      }
    });
    const d = firstRepeat(pc.offsets.map((o) => `${o.unit}:${o.n}`));
    if (d >= 0) fields[`${p}conditions.${i}.offsets.${d}`] = 'This checkpoint is listed twice';
    if (pc.role === 'control' && !pc.pairControl) fields[`${p}conditions.${i}.pairControl`] = 'The control is what the pulls are paired with';
  });
  if (firstRepeat(conditionIds) >= 0) fields[`${p}conditions.${firstRepeat(conditionIds)}.conditionId`] = 'Listed twice';

  const attributeIds = plan.attributes.map((a) => a.attributeId);
  const attributeRows = await db.select().from(attributes).where(and(eq(attributes.labId, labId), inArray(attributes.id, attributeIds)));
  plan.attributes.forEach((pa, i) => {
    const row = attributeRows.find((a) => a.id === pa.attributeId);
    if (!row) {
      fields[`${p}attributes.${i}.attributeId`] = 'No such attribute in your lab';
      return;
    }
    if (!CRITERION_KINDS_BY_ATTRIBUTE[row.kind].includes(pa.criterion.kind)) {
      fields[`${p}attributes.${i}.criterion.kind`] = `A ${row.kind.replace('_', '/')} attribute cannot use this kind of criterion`;
    }
    const c = pa.criterion;
    if (c.kind === 'worst_grade' && row.scale && !row.scale.some((s) => s.grade === c.grade)) {
      fields[`${p}attributes.${i}.criterion.grade`] = 'Not a grade of this attribute’s scale';
    }
  });
  if (firstRepeat(attributeIds) >= 0) fields[`${p}attributes.${firstRepeat(attributeIds)}.attributeId`] = 'Listed twice';
  return { conditionRows, attributeRows };
}
