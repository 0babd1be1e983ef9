/**
 * The starter attribute set every lab gets: what a cosmetics lab checks at a
 * stability checkpoint. Default criteria are common practice, no published
 * source (see shared/compute/criteria.ts DEFAULT_CRITERIA).
 */
import { defaultCriterion, type Criterion } from './compute/criteria';
import type { AttributeScaleStep, MethodField, ProductType } from './domain';

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
  // Checks for products other than emulsions (common practice, no published source; scales are our own).
  {
    code: 'graininess',
    name: 'Graininess',
    kind: 'graded',
    unit: null,
    decimals: 0,
    scale: [
      { grade: 0, label: 'Smooth' },
      { grade: 1, label: 'Slight grain when rubbed' },
      { grade: 2, label: 'Grains seen on the surface' },
      { grade: 3, label: 'Grainy throughout' },
    ],
    defaultCriterion: { kind: 'worst_grade', grade: 1 },
    description: 'Butter or wax crystals felt or seen in a balm or butter (grainy shea, recrystallised fats).',
    usual: false,
  },
  {
    code: 'bloom',
    name: 'Bloom',
    kind: 'graded',
    unit: null,
    decimals: 0,
    scale: [
      { grade: 0, label: 'None' },
      { grade: 1, label: 'Faint haze on the surface' },
      { grade: 2, label: 'White film' },
      { grade: 3, label: 'Heavy white coating' },
    ],
    defaultCriterion: { kind: 'worst_grade', grade: 1 },
    description: 'White haze or film on the surface of a stick, balm or butter (fat or wax bloom).',
    usual: false,
  },
  {
    code: 'hardness',
    name: 'Hardness',
    kind: 'measured',
    unit: 'N',
    decimals: 1,
    methodFields: [
      { key: 'probe', label: 'Probe' },
      { key: 'depth', label: 'Depth', unit: 'mm' },
      { key: 'temperature', label: 'Temperature', unit: '°C' },
    ],
    physicalMin: 0,
    // Common practice, no published source: a balm that softens or hardens by more than a fifth has changed.
    defaultCriterion: { kind: 'change_pct', max: 20 },
    description: 'Peak force of a texture analyser or penetrometer probe; keep probe, depth and temperature the same at every checkpoint.',
    usual: false,
  },
  {
    code: 'oil_separation',
    name: 'Oil separation',
    kind: 'graded',
    unit: null,
    decimals: 0,
    scale: [
      { grade: 0, label: 'None' },
      { grade: 1, label: 'Thin oil film on top' },
      { grade: 2, label: 'Oil layer of a few mm' },
      { grade: 3, label: 'Oil above packed solids' },
    ],
    defaultCriterion: { kind: 'worst_grade', grade: 1 },
    description: 'Free oil rising above the salt or sugar of a scrub.',
    usual: false,
  },
  {
    code: 'crystal_dissolution',
    name: 'Crystal dissolution',
    kind: 'graded',
    unit: null,
    decimals: 0,
    scale: [
      { grade: 0, label: 'Crystals sharp and whole' },
      { grade: 1, label: 'Edges rounded' },
      { grade: 2, label: 'Partly dissolved or clumping' },
      { grade: 3, label: 'Mostly dissolved or caked' },
    ],
    defaultCriterion: { kind: 'worst_grade', grade: 1 },
    description: 'Sugar or salt crystals of a scrub dissolving or caking (water picked up from the air or the formula).',
    usual: false,
  },
  {
    ...compared('grit_feel', 'Grit feel', 'Scrubbing feel of the particles on the skin compared with the control: softer, finer, harsher.'),
    defaultCriterion: { kind: 'worst_compared', level: 'slight' },
    usual: false,
  },
  {
    code: 'clarity',
    name: 'Clarity',
    kind: 'graded',
    unit: null,
    decimals: 0,
    scale: [
      { grade: 0, label: 'Clear' },
      { grade: 1, label: 'Slight haze' },
      { grade: 2, label: 'Hazy' },
      { grade: 3, label: 'Cloudy' },
    ],
    defaultCriterion: { kind: 'worst_grade', grade: 1 },
    description: 'Clarity of a clear wash, gel or oil by eye against a dark background (haze, cloudiness, sediment).',
    usual: false,
  },
  {
    code: 'foam',
    name: 'Foam height',
    kind: 'measured',
    unit: 'mL',
    decimals: 0,
    methodFields: [
      { key: 'dilution', label: 'Dilution in water', unit: '%' },
      { key: 'temperature', label: 'Water temperature', unit: '°C' },
    ],
    physicalMin: 0,
    // Common practice, no published source: a fifth less foam is a change a user notices.
    defaultCriterion: { kind: 'change_pct', max: 20 },
    description: 'Foam volume in a graduated cylinder after a set number of shakes of a dilution in water; keep dilution, water and shaking the same.',
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

/**
 * The default attribute set per product type, by attribute code (common practice, no published
 * source): what a lab usually checks for that kind of product. A lab can change each set.
 */
export const DEFAULT_ATTRIBUTE_SETS: Readonly<Record<ProductType, readonly string[]>> = {
  oil_in_water: ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity'],
  water_in_oil: ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity'],
  anhydrous_balm: ['appearance', 'color', 'odor', 'texture', 'graininess', 'bloom', 'hardness'],
  anhydrous_scrub: ['appearance', 'color', 'odor', 'oil_separation', 'crystal_dissolution', 'grit_feel'],
  gel: ['appearance', 'color', 'odor', 'clarity', 'ph', 'viscosity'],
  oil: ['appearance', 'color', 'odor', 'clarity'],
  surfactant_wash: ['appearance', 'color', 'odor', 'ph', 'viscosity', 'clarity', 'foam'],
  other: ['appearance', 'color', 'odor', 'separation', 'texture', 'ph', 'viscosity'],
};
