/**
 * The starter attribute set every lab gets: what a cosmetics lab checks at a
 * stability checkpoint. Default criteria are common practice, no published
 * source (see shared/compute/criteria.ts DEFAULT_CRITERIA).
 */
import { defaultCriterion, type Criterion } from './compute/criteria';
import type { AttributeScaleStep, MethodField } from './domain';

export interface StarterAttribute {
  code: string;
  name: string;
  kind: 'measured' | 'graded' | 'compared' | 'pass_fail' | 'note';
  unit: string | null;
  decimals: number;
  scale?: AttributeScaleStep[];
  methodFields?: MethodField[];
  physicalMin?: number;
  physicalMax?: number;
  defaultCriterion: Criterion;
  description: string;
  /** Ticked by default in a new study plan. */
  usual: boolean;
}

/** Keepwell's own separation scale (0 best). */
export const SEPARATION_SCALE: AttributeScaleStep[] = [
  { grade: 0, label: 'None' },
  { grade: 1, label: 'Faint oil sheen' },
  { grade: 2, label: 'Oil droplets on surface' },
  { grade: 3, label: 'Visible layer' },
  { grade: 4, label: 'Fully split' },
];

const compared = (code: string, name: string, description: string): StarterAttribute => ({
  code,
  name,
  kind: 'compared',
  unit: null,
  decimals: 0,
  defaultCriterion: defaultCriterion(code),
  description,
  usual: true,
});

export const STARTER_ATTRIBUTES: StarterAttribute[] = [
  compared('appearance', 'Appearance', 'Overall look in the pack compared with the control sample: gloss, grain, bleeding, crystals.'),
  compared('color', 'Color', 'Color by eye compared with the control sample, under the same light.'),
  compared('odor', 'Odor', 'Odor compared with the control sample: rancid, sour, fragrance loss or change.'),
  {
    code: 'separation',
    name: 'Separation',
    kind: 'graded',
    unit: null,
    decimals: 0,
    scale: SEPARATION_SCALE,
    defaultCriterion: defaultCriterion('separation'),
    description: 'Phase separation seen in the container.',
    usual: true,
  },
  compared('texture', 'Texture', 'Feel on the skin and in the pack compared with the control: grainy, stringy, thinner, thicker.'),
  {
    code: 'ph',
    name: 'pH',
    kind: 'measured',
    unit: null,
    decimals: 2,
    methodFields: [{ key: 'method', label: 'Measured', options: ['neat', '10 % dispersion in water', '1 % dispersion in water'] }],
    physicalMin: 0,
    physicalMax: 14,
    defaultCriterion: defaultCriterion('ph'),
    description: 'pH by meter. Anhydrous products are read on a dispersion in water: note which.',
    usual: true,
  },
  {
    code: 'viscosity',
    name: 'Viscosity',
    kind: 'measured',
    unit: 'mPa·s',
    decimals: 0,
    methodFields: [
      { key: 'spindle', label: 'Spindle' },
      { key: 'speed', label: 'Speed', unit: 'rpm' },
      { key: 'temperature', label: 'Temperature', unit: '°C' },
    ],
    physicalMin: 0,
    defaultCriterion: defaultCriterion('viscosity'),
    description: 'Rotational viscometer reading; keep spindle, speed and temperature the same at every checkpoint.',
    usual: true,
  },
  {
    code: 'mass',
    name: 'Mass (weight loss)',
    kind: 'measured',
    unit: 'g',
    decimals: 2,
    physicalMin: 0,
    // Common practice, no published source: a loss of more than a few percent points to a leaking pack.
    defaultCriterion: { kind: 'change_pct', max: 3 },
    description: 'Gross mass of the closed container; the change from day 0 shows moisture or volatile loss through the pack.',
    usual: false,
  },
  {
    code: 'color_l',
    name: 'Color L*',
    kind: 'measured',
    unit: null,
    decimals: 2,
    physicalMin: 0,
    physicalMax: 100,
    defaultCriterion: { kind: 'none' },
    description: 'CIELAB lightness from a colorimeter. With a* and b*, gives the color difference from day 0.',
    usual: false,
  },
  {
    code: 'color_a',
    name: 'Color a*',
    kind: 'measured',
    unit: null,
    decimals: 2,
    defaultCriterion: { kind: 'none' },
    description: 'CIELAB a* (green to red) from a colorimeter.',
    usual: false,
  },
  {
    code: 'color_b',
    name: 'Color b*',
    kind: 'measured',
    unit: null,
    decimals: 2,
    defaultCriterion: { kind: 'none' },
    description: 'CIELAB b* (blue to yellow) from a colorimeter.',
    usual: false,
  },
  {
    code: 'water_activity',
    name: 'Water activity',
    kind: 'measured',
    unit: 'aw',
    decimals: 3,
    physicalMin: 0,
    physicalMax: 1,
    defaultCriterion: { kind: 'none' },
    description: 'Water activity of the product; most relevant to anhydrous and low-water products.',
    usual: false,
  },
  {
    code: 'pack_integrity',
    name: 'Pack integrity',
    kind: 'pass_fail',
    unit: null,
    decimals: 0,
    defaultCriterion: { kind: 'must_pass' },
    description: 'Container and closure intact: no cracks, leaks, swelling, corrosion or label damage; pumps dispense.',
    usual: false,
  },
  {
    code: 'note',
    name: 'Other observations',
    kind: 'note',
    unit: null,
    decimals: 0,
    defaultCriterion: { kind: 'none' },
    description: 'Anything else worth recording.',
    usual: false,
  },
];
