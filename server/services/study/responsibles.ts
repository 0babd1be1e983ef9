/**
 * The people responsible for a study: a list in `study_responsibles`, the main person first. The
 * first is also kept in `studies.responsible_id`, which older readers (digests, notices) use.
 */
import { and, asc, eq, inArray } from 'drizzle-orm';
import type { StudyPlanInput } from '../../../shared/schemas/studies';
import type { DbOrTx } from '../../db/client';
import { studyResponsibles, users } from '../../db/schema';

/** The plan's responsible people in order, the main person first, each once. */
export function responsibleList(plan: Pick<StudyPlanInput, 'responsibleId' | 'responsibleIds'>): number[] {
  const ids = [...(plan.responsibleIds ?? [])];
  // An older client sends only responsibleId; one that sends both names the main person there.
  if (plan.responsibleId != null) ids.unshift(plan.responsibleId);
  return [...new Set(ids)];
}

/** Replaces a study's list (inside the plan's transaction). */
export async function setResponsibles(tx: DbOrTx, labId: number, studyId: number, ids: number[]) {
  await tx.delete(studyResponsibles).where(eq(studyResponsibles.studyId, studyId));
  if (ids.length) await tx.insert(studyResponsibles).values(ids.map((userId, position) => ({ studyId, userId, labId, position })));
}

/** Each study's responsible people with their names, the main person first. */
export async function responsiblesOf(db: DbOrTx, labId: number, studyIds: number[]): Promise<Map<number, { id: number; name: string }[]>> {
  const out = new Map<number, { id: number; name: string }[]>();
  if (!studyIds.length) return out;
  const rows = await db
    .select({ studyId: studyResponsibles.studyId, id: users.id, name: users.name })
    .from(studyResponsibles)
    .innerJoin(users, eq(users.id, studyResponsibles.userId))
    .where(and(eq(studyResponsibles.labId, labId), inArray(studyResponsibles.studyId, studyIds)))
    .orderBy(asc(studyResponsibles.studyId), asc(studyResponsibles.position));
  for (const r of rows) {
    const list = out.get(r.studyId) ?? [];
    list.push({ id: r.id, name: r.name });
    out.set(r.studyId, list);
  }
  return out;
}

