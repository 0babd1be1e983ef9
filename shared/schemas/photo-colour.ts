/** Bodies and answers of the photo-colour routes (reference cards, regions marked on a photo). */
import { z } from 'zod';
import type { QualityFlag } from '../compute/photo-colour';
import { text } from './common';

const fraction = z.number({ error: 'Enter a number from 0 to 1' }).finite().min(0, 'Must be at least 0').max(1, 'Must be at most 1');

/** A box on the upright photo, as fractions of its width and height. */
export const boxInput = z
  .strictObject({ x: fraction, y: fraction, w: fraction.refine((v) => v > 0, 'Must be wider than 0'), h: fraction.refine((v) => v > 0, 'Must be taller than 0') })
  .refine((b) => b.x + b.w <= 1 + 1e-9, { message: 'The box reaches past the right edge of the photo', path: ['w'] })
  .refine((b) => b.y + b.h <= 1 + 1e-9, { message: 'The box reaches past the bottom edge of the photo', path: ['h'] });

export const regionsInput = z.strictObject({
  product: boxInput,
  patch: boxInput,
  cardId: z.number({ error: 'Choose the reference card in the photo' }).int().positive(),
  /** Required when the photo's regions were marked before. */
  reason: text().trim().max(500).optional(),
});
export type RegionsInput = z.infer<typeof regionsInput>;

const labValue = (name: string, min: number, max: number) =>
  z.number({ error: `Enter the card's ${name} value` }).finite().min(min, `${name} is at least ${min}`).max(max, `${name} is at most ${max}`);

export const cardInput = z.strictObject({
  name: text('Enter a name').trim().min(1, 'Enter a name').max(80),
  L: labValue('L*', 0, 100),
  a: labValue('a*', -128, 127),
  b: labValue('b*', -128, 127),
});
export type CardInput = z.infer<typeof cardInput>;

export interface CardView {
  id: number;
  name: string;
  L: number;
  a: number;
  b: number;
}

export interface BoxView {
  x: number;
  y: number;
  w: number;
  h: number;
}

/** One ΔE00 comparison: against the initial photo or the same-day control's photo. */
export interface ColourComparison {
  /** The photo compared with; null when there is none with marked regions. */
  photoId: number | null;
  checkpointLabel: string | null;
  deltaE: number | null;
  flags: QualityFlag[];
  /** Why no value is shown (sentences); empty when shown. */
  withheld: string[];
}

/** A photo's colour as measured from its marked regions. */
export interface PhotoColourView {
  photoId: number;
  /** Null when the regions have not been marked yet. */
  marked: {
    product: BoxView;
    patch: BoxView;
    card: CardView;
    markedBy: string;
    markedAt: string;
    reason: string | null;
  } | null;
  lab: { L: number; a: number; b: number } | null;
  swatch: string | null;
  flags: QualityFlag[];
  flagText: string[];
  withheld: string[];
  vsInitial: ColourComparison;
  vsControl: ColourComparison;
  /** The boxes of this sample's previous marked photo, offered again. */
  previous: { product: BoxView; patch: BoxView; cardId: number } | null;
  /** The study's criterion "colour difference from day 0 at most N (ΔE00)", judged on the ΔE00 against the initial photo. */
  criterion: { attribute: string; max: number; verdict: 'pass' | 'fail' | 'withheld'; message: string } | null;
  /** An instrument colour reading at this checkpoint wins over the photo estimate. */
  instrument: { attribute: string; value: string } | null;
  /** Earlier marks of this photo, newest first (kept: marks are part of the record). */
  history: { product: BoxView; patch: BoxView; markedBy: string; markedAt: string; reason: string | null }[];
}
