/**
 * Reference cards and the regions marked on photos; the photo's colour and its ΔE00 against the
 * initial photo and the same-day control's photo (shared/compute/photo-colour.ts does the arithmetic).
 */
import { and, asc, desc, eq, inArray, isNull, sql } from 'drizzle-orm';
import { correctedColour, FLAG_TEXT, judgeDeltaE, photoDifference, type PhotoColour } from '../../../shared/compute/photo-colour';
import type { CardInput, CardView, ColourComparison, PhotoColourView, RegionsInput } from '../../../shared/schemas/photo-colour';
import type { Db, DbOrTx } from '../../db/client';
import { attributes, checkpoints, colourCards, observations, photoRegions, photos, samples, studies, studyAttributes, users } from '../../db/schema';
import { photoKey, readAll, type FileStore } from '../../files';
import { HttpError, notFound } from '../../http/errors';
import { audit } from '../audit';
import { checkpointOpen } from '../recording/context';
import { measureRegions } from './measure';

const cardView = (c: typeof colourCards.$inferSelect): CardView => ({ id: c.id, name: c.name, L: c.cieL, a: c.cieA, b: c.cieB });

export async function listCards(db: DbOrTx, labId: number): Promise<CardView[]> {
  return (await db.select().from(colourCards).where(eq(colourCards.labId, labId)).orderBy(asc(colourCards.id))).map(cardView);
}

export async function createCard(db: Db, who: { id: number; labId: number }, input: CardInput): Promise<CardView> {
  return db.transaction(async (tx) => {
    const [{ id }] = await tx.insert(colourCards).values({ labId: who.labId, name: input.name, cieL: input.L, cieA: input.a, cieB: input.b, createdBy: who.id }).$returningId();
    await audit(tx, { labId: who.labId, userId: who.id, action: 'create', entity: 'colour_card', entityId: id, newValue: input });
    return { id, name: input.name, L: input.L, a: input.a, b: input.b };
  });
}

async function photoInLab(db: DbOrTx, labId: number, photoId: number) {
  const [row] = await db
    .select({ p: photos, cp: checkpoints, sample: samples, studyStatus: studies.status })
    .from(photos)
    .innerJoin(checkpoints, eq(checkpoints.id, photos.checkpointId))
    .innerJoin(samples, eq(samples.id, photos.sampleId))
    .innerJoin(studies, eq(studies.id, photos.studyId))
    .where(and(eq(photos.labId, labId), eq(photos.id, photoId)));
  if (!row) throw notFound('No such photo in your lab');
  return row;
}

/**
 * Marks (or marks again) the product and card regions of a photo and measures them from the original.
 * Marking again keeps the earlier mark (replaced_at set) and needs a reason; both in one transaction with the audit row.
 */
export async function markRegions(
  db: Db,
  files: FileStore,
  who: { id: number; labId: number; role: string },
  photoId: number,
  input: RegionsInput,
  today: string,
): Promise<void> {
  const { p, cp, sample, studyStatus } = await photoInLab(db, who.labId, photoId);
  const closed = checkpointOpen({ status: studyStatus }, cp, today, who.role !== 'technician');
  if (closed) throw new HttpError(409, 'conflict', closed);
  const [card] = await db.select().from(colourCards).where(and(eq(colourCards.labId, who.labId), eq(colourCards.id, input.cardId)));
  if (!card) throw new HttpError(400, 'validation', 'No such reference card in your lab', { cardId: 'Choose one of your lab\'s reference cards' });
  if (![card.cieL, card.cieA, card.cieB].every(Number.isFinite)) {
    throw new HttpError(400, 'validation', 'This reference card has no CIELAB values', { cardId: 'Enter the card\'s L*, a* and b* first' });
  }
  const measured = await measureRegions(await readAll(files, photoKey(p.storedName)), { product: input.product, patch: input.patch });
  await db.transaction(async (tx) => {
    const [current] = await tx
      .select()
      .from(photoRegions)
      .where(and(eq(photoRegions.labId, who.labId), eq(photoRegions.photoId, photoId), isNull(photoRegions.replacedAt)))
      .for('update');
    if (current && !input.reason) {
      throw new HttpError(400, 'validation', 'These regions were marked before: say why you mark them again', { reason: 'Give a reason for marking again' });
    }
    if (current) await tx.update(photoRegions).set({ replacedAt: sql`CURRENT_TIMESTAMP(3)` }).where(eq(photoRegions.id, current.id));
    await tx.insert(photoRegions).values({
      labId: who.labId,
      photoId,
      cardId: card.id,
      productBox: input.product,
      patchBox: input.patch,
      productStats: measured.product,
      patchStats: measured.patch,
      markedBy: who.id,
      reason: input.reason ?? null,
    });
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: current ? 'update' : 'create',
      entity: 'photo_regions',
      entityId: photoId,
      studyId: p.studyId,
      oldValue: current ? { product: current.productBox, patch: current.patchBox, cardId: current.cardId } : null,
      newValue: { sample: sample.code, checkpoint: cp.label, product: input.product, patch: input.patch, card: card.name },
      reason: input.reason ?? null,
    });
  });
}

type Marked = { photoId: number; checkpointId: number; label: string; due: string; sampleId: number; colour: PhotoColour };

/** The current marks of photos matching `where`, with their corrected colour. */
async function markedPhotos(db: DbOrTx, labId: number, where: ReturnType<typeof and>): Promise<Marked[]> {
  const rows = await db
    .select({ r: photoRegions, card: colourCards, p: photos, label: checkpoints.label, due: checkpoints.dueDate })
    .from(photoRegions)
    .innerJoin(photos, eq(photos.id, photoRegions.photoId))
    .innerJoin(colourCards, eq(colourCards.id, photoRegions.cardId))
    .innerJoin(checkpoints, eq(checkpoints.id, photos.checkpointId))
    .innerJoin(samples, eq(samples.id, photos.sampleId))
    .where(and(eq(photoRegions.labId, labId), isNull(photoRegions.replacedAt), where))
    .orderBy(asc(checkpoints.dueDate), asc(photos.id));
  return rows.map(({ r, card, p, label, due }) => ({
    photoId: p.id,
    checkpointId: p.checkpointId,
    label,
    due,
    sampleId: p.sampleId,
    colour: correctedColour(r.productStats, r.patchStats, { L: card.cieL, a: card.cieA, b: card.cieB }),
  }));
}

function compare(self: Marked | null, other: Marked | undefined, none: string): ColourComparison {
  if (!other) return { photoId: null, checkpointLabel: null, deltaE: null, flags: [], withheld: [none] };
  if (!self) return { photoId: other.photoId, checkpointLabel: other.label, deltaE: null, flags: [], withheld: ['Mark the product and the card on this photo'] };
  const d = photoDifference(self.colour, other.colour);
  return { photoId: other.photoId, checkpointLabel: other.label, ...d };
}

/** The photo's colour, its comparisons, the previous pull's boxes and any instrument reading. */
export async function photoColour(db: DbOrTx, labId: number, photoId: number): Promise<PhotoColourView> {
  const { p, cp, sample } = await photoInLab(db, labId, photoId);
  const batchPhotos = await markedPhotos(db, labId, eq(samples.batchId, sample.batchId));
  const self = batchPhotos.find((m) => m.photoId === photoId) ?? null;
  // The initial photo: the batch's initial test; else this sample's earliest marked photo.
  const initialCps = await db.select({ id: checkpoints.id }).from(checkpoints).where(and(eq(checkpoints.labId, labId), eq(checkpoints.studyId, p.studyId), eq(checkpoints.kind, 'initial')));
  const initialIds = new Set(initialCps.map((c) => c.id));
  const initial = batchPhotos.find((m) => initialIds.has(m.checkpointId)) ?? batchPhotos.find((m) => m.sampleId === sample.id);
  const control = cp.controlCheckpointId ? batchPhotos.filter((m) => m.checkpointId === cp.controlCheckpointId).at(-1) : undefined;
  const isInitial = initial?.photoId === photoId;
  const vsInitial = isInitial
    ? { photoId, checkpointLabel: cp.label, deltaE: 0, flags: self?.colour.flags ?? [], withheld: self?.colour.withheld ?? [] }
    : compare(self, initial, 'No initial photo with marked regions');
  const vsControl = cp.controlCheckpointId ? compare(self, control, 'No same-day control photo with marked regions') : { photoId: null, checkpointLabel: null, deltaE: null, flags: [], withheld: ['This checkpoint has no same-day control'] };

  const [current, ...older] = await db
    .select({ r: photoRegions, card: colourCards, who: users.name })
    .from(photoRegions)
    .innerJoin(colourCards, eq(colourCards.id, photoRegions.cardId))
    .innerJoin(users, eq(users.id, photoRegions.markedBy))
    .where(and(eq(photoRegions.labId, labId), eq(photoRegions.photoId, photoId)))
    .orderBy(sql`${photoRegions.replacedAt} IS NULL DESC`, desc(photoRegions.id));
  const live = current && !current.r.replacedAt ? current : null;
  const history = (live ? older : [current, ...older].filter(Boolean)).map(({ r, who }) => ({
    product: r.productBox,
    patch: r.patchBox,
    markedBy: who,
    markedAt: r.markedAt.toISOString(),
    reason: r.reason,
  }));

  // The boxes of this sample's previous marked photo (or, for a first pull, the batch's last one), offered again.
  const earlier = batchPhotos.filter((m) => m.photoId !== photoId && m.due <= cp.dueDate);
  const prevOf = earlier.filter((m) => m.sampleId === sample.id).at(-1) ?? earlier.at(-1);
  let previous: PhotoColourView['previous'] = null;
  if (prevOf) {
    const [r] = await db.select().from(photoRegions).where(and(eq(photoRegions.labId, labId), eq(photoRegions.photoId, prevOf.photoId), isNull(photoRegions.replacedAt)));
    if (r) previous = { product: r.productBox, patch: r.patchBox, cardId: r.cardId };
  }

  const inst = await db
    .select({ name: attributes.name, code: attributes.code, v: observations.valueNum, unit: attributes.unit })
    .from(observations)
    .innerJoin(studyAttributes, eq(studyAttributes.id, observations.studyAttributeId))
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(
      and(
        eq(observations.labId, labId),
        eq(observations.sampleId, sample.id),
        eq(observations.checkpointId, cp.id),
        eq(observations.voided, false),
        inArray(attributes.code, ['color_l', 'color_a', 'color_b']),
      ),
    )
    .orderBy(asc(attributes.code));
  const order = ['color_l', 'color_a', 'color_b'];
  const withValues = inst.filter((i) => i.v !== null).sort((x, y) => order.indexOf(x.code) - order.indexOf(y.code));
  const instrument = withValues.length ? { attribute: 'Instrument color (CIELAB)', value: withValues.map((i) => `${i.name} ${i.v}`).join(', ') } : null;

  const crit = (await db
    .select({ name: attributes.name, criterion: studyAttributes.criterion })
    .from(studyAttributes)
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(and(eq(studyAttributes.labId, labId), eq(studyAttributes.studyId, p.studyId)))
    .orderBy(asc(studyAttributes.position))).find((a) => a.criterion.kind === 'delta_e00_max');
  const criterion =
    crit && crit.criterion.kind === 'delta_e00_max' ? { attribute: crit.name, max: crit.criterion.max, ...judgeDeltaE(vsInitial.deltaE, crit.criterion.max) } : null;

  const card = live?.card;
  return {
    photoId,
    marked: live
      ? { product: live.r.productBox, patch: live.r.patchBox, card: cardView(card!), markedBy: live.who, markedAt: live.r.markedAt.toISOString(), reason: live.r.reason }
      : null,
    lab: self?.colour.lab ? { L: round(self.colour.lab.L), a: round(self.colour.lab.a), b: round(self.colour.lab.b) } : null,
    swatch: self?.colour.swatch ?? null,
    flags: self?.colour.flags ?? [],
    flagText: (self?.colour.flags ?? []).map((f) => FLAG_TEXT[f]),
    withheld: live ? (self?.colour.withheld ?? []) : ['The product and the card are not marked on this photo yet'],
    vsInitial,
    vsControl,
    previous,
    criterion,
    instrument,
    history,
  };
}

const round = (x: number) => Math.round(x * 100) / 100;

/** Per photo of a study: its checkpoint, sample and ΔE00 against the initial photo (for the analysis chart and report). */
export async function studyPhotoDeltaE(
  db: DbOrTx,
  labId: number,
  studyId: number,
): Promise<{ photoId: number; sampleId: number; checkpointId: number; deltaE: number | null; flags: string[]; swatch: string | null }[]> {
  const marked = await markedPhotos(db, labId, eq(photos.studyId, studyId));
  const out: { photoId: number; sampleId: number; checkpointId: number; deltaE: number | null; flags: string[]; swatch: string | null }[] = [];
  const bySample = await db.select({ id: samples.id, batchId: samples.batchId }).from(samples).where(and(eq(samples.labId, labId), eq(samples.studyId, studyId)));
  const batchOf = new Map(bySample.map((s) => [s.id, s.batchId]));
  const initialCps = new Set(
    (await db.select({ id: checkpoints.id }).from(checkpoints).where(and(eq(checkpoints.labId, labId), eq(checkpoints.studyId, studyId), eq(checkpoints.kind, 'initial')))).map((c) => c.id),
  );
  for (const m of marked) {
    const batch = batchOf.get(m.sampleId);
    const sameBatch = marked.filter((x) => batchOf.get(x.sampleId) === batch);
    const initial = sameBatch.find((x) => initialCps.has(x.checkpointId)) ?? sameBatch.find((x) => x.sampleId === m.sampleId);
    if (!initial) continue;
    const d = initial.photoId === m.photoId ? { deltaE: 0, flags: m.colour.flags } : photoDifference(m.colour, initial.colour);
    out.push({ photoId: m.photoId, sampleId: m.sampleId, checkpointId: m.checkpointId, deltaE: d.deltaE, flags: d.flags, swatch: m.colour.swatch });
  }
  return out;
}
