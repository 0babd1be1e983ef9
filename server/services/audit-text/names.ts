/** Names for the ids a page of audit rows mentions: one lab-scoped query per kind of record, never one per row. */
import { and, eq, inArray } from 'drizzle-orm';
import type { AttributeKind } from '../../../shared/compute/criteria';
import type { AttributeScaleStep, MethodField } from '../../../shared/domain';
import type { DbOrTx } from '../../db/client';
import { attributes, batches, checkpoints, decisions, ingredients, observations, oosInvestigations, products, samples, storageConditions, studies, studyAttributes, studyConditions, users, variants } from '../../db/schema';
import { AuditSource, AttrInfo, AuditNames, rec, idOf, arr } from './common';

// ---------------------------------------------------------------- looking names up

/** The ids each row mentions, by kind of record. */
export function wantedIds(rows: readonly AuditSource[]) {
  const want = {
    studies: new Set<number>(),
    observations: new Set<number>(),
    investigations: new Set<number>(),
    decisions: new Set<number>(),
    checkpoints: new Set<number>(),
    users: new Set<number>(),
    conditions: new Set<number>(),
    attributes: new Set<number>(),
    products: new Set<number>(),
    variants: new Set<number>(),
    batches: new Set<number>(),
    ingredients: new Set<number>(),
  };
  const add = (set: Set<number>, v: unknown) => {
    const id = idOf(v);
    if (id) set.add(id);
  };
  for (const r of rows) {
    const o = rec(r.oldValue);
    const n = rec(r.newValue);
    add(want.studies, r.studyId);
    switch (r.entity) {
      case 'study':
        add(want.studies, r.entityId);
        for (const p of [o, n]) {
          add(want.products, p.productId);
          add(want.users, p.responsibleId);
          for (const b of arr(p.batchIds)) add(want.batches, b);
          for (const c of arr(p.conditions)) add(want.conditions, rec(c).conditionId);
          for (const a of arr(p.attributes)) add(want.attributes, rec(a).attributeId);
          for (const q of arr(p.proposals)) add(want.variants, rec(q).variantId);
        }
        break;
      case 'observation':
        add(want.observations, r.entityId);
        break;
      case 'oos_investigation':
        add(want.investigations, r.entityId);
        break;
      case 'decision':
        add(want.decisions, r.entityId);
        break;
      case 'checkpoint':
        add(want.checkpoints, r.entityId);
        break;
      case 'user':
        add(want.users, r.entityId);
        break;
      case 'storage_condition':
        add(want.conditions, r.entityId);
        break;
      case 'chamber_log':
        add(want.conditions, n.conditionId);
        break;
      case 'attribute':
        add(want.attributes, r.entityId);
        break;
      case 'product':
        add(want.products, r.entityId);
        break;
      case 'variant':
        add(want.variants, r.entityId);
        add(want.variants, n.derivedFromId);
        add(want.products, n.productId);
        for (const p of [o, n]) for (const l of arr(p.lines)) add(want.ingredients, rec(l).ingredientId);
        break;
      case 'batch':
        add(want.batches, r.entityId);
        add(want.variants, n.variantId);
        break;
      case 'ingredient':
        add(want.ingredients, r.entityId);
        break;
    }
  }
  return want;
}

export const attrColumns = {
  name: attributes.name,
  kind: attributes.kind,
  unit: attributes.unit,
  decimals: attributes.decimals,
  scale: attributes.scale,
  methodFields: attributes.methodFields,
};
export const attrOf = (a: { name: string; kind: AttributeKind; unit: string | null; decimals: number; scale: unknown; methodFields: unknown }): AttrInfo => ({
  name: a.name,
  kind: a.kind,
  unit: a.unit,
  decimals: a.decimals,
  scale: Array.isArray(a.scale) ? (a.scale as AttributeScaleStep[]) : null,
  methodFields: Array.isArray(a.methodFields) ? (a.methodFields as MethodField[]) : null,
});

/** Every name a page of rows mentions: one query per kind of record, each filtered on the lab. */
export async function lookUpNames(db: DbOrTx, labId: number, rows: readonly AuditSource[]): Promise<AuditNames> {
  const want = wantedIds(rows);
  const ids = (s: Set<number>) => [...s];
  const when = async <T>(s: Set<number>, q: (list: number[]) => Promise<T[]>): Promise<T[]> => (s.size ? q(ids(s)) : []);
  const [st, obs, inv, dec, cps, us, conds, attrs, prods, vars, bats, ings] = await Promise.all([
    when(want.studies, (list) =>
      db
        .select({ id: studies.id, title: studies.title, product: products.name })
        .from(studies)
        .innerJoin(products, eq(products.id, studies.productId))
        .where(and(eq(studies.labId, labId), inArray(studies.id, list))),
    ),
    when(want.observations, (list) =>
      db
        .select({ id: observations.id, studyId: observations.studyId, sample: samples.code, checkpoint: checkpoints.label, ...attrColumns })
        .from(observations)
        .innerJoin(samples, eq(samples.id, observations.sampleId))
        .innerJoin(checkpoints, eq(checkpoints.id, observations.checkpointId))
        .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
        .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
        .where(and(eq(observations.labId, labId), inArray(observations.id, list))),
    ),
    when(want.investigations, (list) =>
      db
        .select({ id: oosInvestigations.id, studyId: oosInvestigations.studyId, sample: samples.code, checkpoint: checkpoints.label, ...attrColumns })
        .from(oosInvestigations)
        .innerJoin(samples, eq(samples.id, oosInvestigations.sampleId))
        .innerJoin(checkpoints, eq(checkpoints.id, oosInvestigations.checkpointId))
        .innerJoin(studyAttributes, eq(studyAttributes.id, oosInvestigations.studyAttributeId))
        .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
        .where(and(eq(oosInvestigations.labId, labId), inArray(oosInvestigations.id, list))),
    ),
    when(want.decisions, (list) =>
      db
        .select({ id: decisions.id, variant: variants.code, product: products.name })
        .from(decisions)
        .innerJoin(variants, eq(variants.id, decisions.variantId))
        .innerJoin(products, eq(products.id, variants.productId))
        .where(and(eq(decisions.labId, labId), inArray(decisions.id, list))),
    ),
    when(want.checkpoints, (list) =>
      db
        .select({ id: checkpoints.id, label: checkpoints.label, studyId: checkpoints.studyId, condition: storageConditions.name })
        .from(checkpoints)
        .leftJoin(studyConditions, eq(studyConditions.id, checkpoints.studyConditionId))
        .leftJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
        .where(and(eq(checkpoints.labId, labId), inArray(checkpoints.id, list))),
    ),
    when(want.users, (list) =>
      db
        .select({ id: users.id, name: users.name, email: users.email })
        .from(users)
        .where(and(eq(users.labId, labId), inArray(users.id, list))),
    ),
    when(want.conditions, (list) =>
      db
        .select({ id: storageConditions.id, name: storageConditions.name })
        .from(storageConditions)
        .where(and(eq(storageConditions.labId, labId), inArray(storageConditions.id, list))),
    ),
    when(want.attributes, (list) =>
      db
        .select({ id: attributes.id, ...attrColumns })
        .from(attributes)
        .where(and(eq(attributes.labId, labId), inArray(attributes.id, list))),
    ),
    when(want.products, (list) =>
      db
        .select({ id: products.id, name: products.name })
        .from(products)
        .where(and(eq(products.labId, labId), inArray(products.id, list))),
    ),
    when(want.variants, (list) =>
      db
        .select({ id: variants.id, code: variants.code, product: products.name })
        .from(variants)
        .innerJoin(products, eq(products.id, variants.productId))
        .where(and(eq(variants.labId, labId), inArray(variants.id, list))),
    ),
    when(want.batches, (list) =>
      db
        .select({ id: batches.id, lot: batches.lotCode, variant: variants.code, product: products.name })
        .from(batches)
        .innerJoin(variants, eq(variants.id, batches.variantId))
        .innerJoin(products, eq(products.id, variants.productId))
        .where(and(eq(batches.labId, labId), inArray(batches.id, list))),
    ),
    when(want.ingredients, (list) =>
      db
        .select({ id: ingredients.id, name: ingredients.tradeName })
        .from(ingredients)
        .where(and(eq(ingredients.labId, labId), inArray(ingredients.id, list))),
    ),
  ]);
  return {
    studies: new Map(st.map((r) => [r.id, { title: r.title, product: r.product }])),
    observations: new Map(obs.map((r) => [r.id, { attr: attrOf(r), sample: r.sample, checkpoint: r.checkpoint, studyId: r.studyId }])),
    investigations: new Map(inv.map((r) => [r.id, { attr: attrOf(r), sample: r.sample, checkpoint: r.checkpoint, studyId: r.studyId }])),
    decisions: new Map(dec.map((r) => [r.id, { variant: r.variant, product: r.product }])),
    checkpoints: new Map(cps.map((r) => [r.id, { label: r.label, condition: r.condition, studyId: r.studyId }])),
    users: new Map(us.map((r) => [r.id, { name: r.name, email: r.email }])),
    conditions: new Map(conds.map((r) => [r.id, r.name])),
    attributes: new Map(attrs.map((r) => [r.id, attrOf(r)])),
    products: new Map(prods.map((r) => [r.id, r.name])),
    variants: new Map(vars.map((r) => [r.id, { code: r.code, product: r.product }])),
    batches: new Map(bats.map((r) => [r.id, { lot: r.lot, variant: r.variant, product: r.product }])),
    ingredients: new Map(ings.map((r) => [r.id, r.name])),
  };
}
