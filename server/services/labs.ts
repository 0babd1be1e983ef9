import { and, eq, inArray } from 'drizzle-orm';
import { STARTER_ATTRIBUTES } from '../../shared/attributes-starter';
import type { DbOrTx } from '../db/client';
import { attributes } from '../db/schema';

/** Gives a lab the starter attribute set (idempotent: existing codes are left alone). */
export async function ensureStarterAttributes(db: DbOrTx, labId: number): Promise<void> {
  const existing = await db
    .select({ code: attributes.code })
    .from(attributes)
    .where(and(eq(attributes.labId, labId), inArray(attributes.code, STARTER_ATTRIBUTES.map((a) => a.code))));
  const missing = STARTER_ATTRIBUTES.filter((a) => !existing.some((e) => e.code === a.code));
  if (!missing.length) return;
  await db.insert(attributes).values(
    missing.map((a) => ({
      labId,
      code: a.code,
      name: a.name,
      kind: a.kind,
      unit: a.unit,
      decimals: a.decimals,
      scale: a.scale ?? null,
      methodFields: a.methodFields ?? null,
      physicalMin: a.physicalMin ?? null,
      physicalMax: a.physicalMax ?? null,
      defaultCriterion: a.defaultCriterion,
      description: a.description,
      builtIn: true,
    })),
  );
}
