/**
 * The lab's attribute set per product type: what a new plan for a product of that type ticks.
 * Without a row of its own a product type uses the default set (shared/attributes-starter.ts).
 */
import { and, asc, eq, inArray } from 'drizzle-orm';
import { DEFAULT_ATTRIBUTE_SETS } from '../../shared/attributes-starter';
import { PRODUCT_TYPE_LABELS, PRODUCT_TYPES, type ProductType } from '../../shared/domain';
import type { AttributeSet } from '../../shared/schemas/templates';
import type { Db, DbOrTx } from '../db/client';
import { attributes, labAttributeSets } from '../db/schema';
import { audit } from './audit';
import { bad, type Actor } from './study/common';

type Row = { id: number; code: string; active: boolean };

function resolve(library: Row[], productType: ProductType, stored: number[] | undefined): AttributeSet {
  const active = library.filter((a) => a.active);
  const wanted = stored ? new Set(stored) : new Set(active.filter((a) => DEFAULT_ATTRIBUTE_SETS[productType].includes(a.code)).map((a) => a.id));
  return {
    productType,
    label: PRODUCT_TYPE_LABELS[productType],
    attributeIds: active.filter((a) => wanted.has(a.id)).map((a) => a.id),
    edited: stored != null,
  };
}

async function library(db: DbOrTx, labId: number): Promise<Row[]> {
  return db.select({ id: attributes.id, code: attributes.code, active: attributes.active }).from(attributes).where(eq(attributes.labId, labId)).orderBy(asc(attributes.id));
}

export async function attributeSets(db: DbOrTx, labId: number): Promise<AttributeSet[]> {
  const [lib, rows] = await Promise.all([library(db, labId), db.select().from(labAttributeSets).where(eq(labAttributeSets.labId, labId))]);
  return PRODUCT_TYPES.map((t) => resolve(lib, t, rows.find((r) => r.productType === t)?.attributeIds));
}

/** Sets the lab's own list for a product type (active attributes of the lab only), with its audit row. */
export async function saveAttributeSet(db: Db, actor: Actor, productType: ProductType, attributeIds: number[]): Promise<AttributeSet> {
  return db.transaction(async (tx) => {
    const found = await tx
      .select({ id: attributes.id, active: attributes.active })
      .from(attributes)
      .where(and(eq(attributes.labId, actor.labId), inArray(attributes.id, attributeIds)));
    const fields: Record<string, string> = {};
    attributeIds.forEach((id, i) => {
      const row = found.find((a) => a.id === id);
      if (!row) fields[`attributeIds.${i}`] = 'No such attribute in your lab';
      else if (!row.active) fields[`attributeIds.${i}`] = 'This attribute is no longer in use';
      else if (attributeIds.indexOf(id) !== i) fields[`attributeIds.${i}`] = 'Listed twice';
    });
    if (Object.keys(fields).length) throw bad(fields);
    const [before] = await tx
      .select()
      .from(labAttributeSets)
      .where(and(eq(labAttributeSets.labId, actor.labId), eq(labAttributeSets.productType, productType)))
      .for('update');
    if (before) {
      await tx
        .update(labAttributeSets)
        .set({ attributeIds, updatedBy: actor.id })
        .where(and(eq(labAttributeSets.labId, actor.labId), eq(labAttributeSets.productType, productType)));
    } else {
      await tx.insert(labAttributeSets).values({ labId: actor.labId, productType, attributeIds, updatedBy: actor.id });
    }
    await audit(tx, {
      labId: actor.labId,
      userId: actor.id,
      action: 'update',
      entity: 'attribute_set',
      entityId: productType,
      oldValue: before ? { attributeIds: before.attributeIds } : { default: true },
      newValue: { attributeIds },
    });
    return resolve(await library(tx, actor.labId), productType, attributeIds);
  });
}

/** Back to the default set for a product type. */
export async function resetAttributeSet(db: Db, actor: Actor, productType: ProductType): Promise<AttributeSet> {
  return db.transaction(async (tx) => {
    const [before] = await tx
      .select()
      .from(labAttributeSets)
      .where(and(eq(labAttributeSets.labId, actor.labId), eq(labAttributeSets.productType, productType)))
      .for('update');
    if (before) {
      await tx.delete(labAttributeSets).where(and(eq(labAttributeSets.labId, actor.labId), eq(labAttributeSets.productType, productType)));
      await audit(tx, {
        labId: actor.labId,
        userId: actor.id,
        action: 'update',
        entity: 'attribute_set',
        entityId: productType,
        oldValue: { attributeIds: before.attributeIds },
        newValue: { default: true },
      });
    }
    return resolve(await library(tx, actor.labId), productType, undefined);
  });
}
