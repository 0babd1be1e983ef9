/** Colour measured from photos: the lab's reference cards and the regions marked on each photo. */
import { datetime, double, index, json, mysqlTable, text, varchar } from 'drizzle-orm/mysql-core';
import type { Box, RegionStats } from '../../../shared/compute/photo-colour';
import { createdAt, labs, pk, ref, users } from './core';
import { photos } from './records';

/** A neutral reference card the lab photographs beside its samples, with its CIELAB (D65) values. */
export const colourCards = mysqlTable(
  'colour_cards',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    name: varchar('name', { length: 80 }).notNull(),
    cieL: double('cie_l').notNull(),
    cieA: double('cie_a').notNull(),
    cieB: double('cie_b').notNull(),
    createdBy: ref('created_by').notNull().references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [index('colour_cards_lab_idx').on(t.labId)],
);

/**
 * The product and card boxes marked on a photo and what the server measured in them. Part of the record:
 * marking again keeps the earlier row (with who, when and why) and sets its replaced_at.
 */
export const photoRegions = mysqlTable(
  'photo_regions',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    photoId: ref('photo_id').notNull().references(() => photos.id),
    cardId: ref('card_id').notNull().references(() => colourCards.id),
    productBox: json('product_box').$type<Box>().notNull(),
    patchBox: json('patch_box').$type<Box>().notNull(),
    productStats: json('product_stats').$type<RegionStats>().notNull(),
    patchStats: json('patch_stats').$type<RegionStats>().notNull(),
    markedBy: ref('marked_by').notNull().references(() => users.id),
    markedAt: createdAt('marked_at'),
    /** Why the regions were marked again (required when replacing a mark). */
    reason: text('reason'),
    replacedAt: datetime('replaced_at', { mode: 'date', fsp: 3 }),
  },
  (t) => [index('photo_regions_photo_idx').on(t.labId, t.photoId)],
);
