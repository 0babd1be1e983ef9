/**
 * Storage-condition presets offered on the create form, and the short safety cautions shown
 * beside conditions that can hurt someone. Pure data; no I/O.
 *
 * ICH values: ICH Q1A(R2) (2003), section 2.1.7.1 "General case" table:
 *   long term     25 °C ± 2 °C / 60 % RH ± 5 % RH  or  30 °C ± 2 °C / 65 % RH ± 5 % RH
 *   intermediate  30 °C ± 2 °C / 65 % RH ± 5 % RH
 *   accelerated   40 °C ± 2 °C / 75 % RH ± 5 % RH
 * The other presets are common practice in cosmetic labs, with no published source.
 */
import type { ConditionInput } from './schemas/storage';

export interface StoragePreset {
  key: PresetKey;
  /** Shown in the preset picker. */
  label: string;
  /** 'ich' = ICH Q1A(R2) 2.1.7.1; 'common' = common practice, no published source. */
  source: 'ich' | 'common';
  /** A sentence naming the source, shown under the picker. */
  sourceNote: string;
  /** What the form is filled with (name and preset included; location is left to the lab). */
  input: ConditionInput;
}

export const PRESET_KEYS = [
  'fridge-4',
  'room',
  'in-use',
  'ich-25-60',
  'ich-30-65',
  'ich-40-75',
  'oven-45',
  'oven-50',
  'freeze-thaw',
  'window-daylight',
  'centrifuge-3000',
] as const;
export type PresetKey = (typeof PRESET_KEYS)[number];

const ICH = 'ICH Q1A(R2), section 2.1.7.1 (general case)';
const COMMON = 'Common practice in cosmetic labs; no published source.';

export const STORAGE_PRESETS: readonly StoragePreset[] = [
  {
    key: 'fridge-4',
    label: '4 °C control (refrigerator)',
    source: 'common',
    sourceNote: `${COMMON} The usual control against which odor and color are compared.`,
    input: { kind: 'constant', name: '4 °C control', preset: '4 °C control (refrigerator)', setpointC: 4, toleranceC: 2, isControl: true },
  },
  {
    key: 'room',
    label: 'Room temperature (shelf, about 20–25 °C)',
    source: 'common',
    sourceNote: `${COMMON} Samples on a shelf in the lab, away from sun and heaters, as a customer keeps the product; log the room to know what it saw.`,
    input: { kind: 'constant', name: 'Room temperature shelf', preset: 'Room temperature 22 °C ± 3 °C (common practice)', setpointC: 22, toleranceC: 3 },
  },
  {
    key: 'in-use',
    label: 'In use: opened daily, room temperature',
    source: 'common',
    sourceNote: `${COMMON} The pack is opened and used every day as a customer would (a clean finger or spatula, closed after); the months it stays within its criteria support the period after opening.`,
    input: { kind: 'constant', name: 'In use, opened daily', preset: 'In use: opened daily, room temperature (common practice)', setpointC: 22, toleranceC: 3, inUse: true },
  },
  {
    key: 'ich-25-60',
    label: '25 °C / 60 % RH (ICH long term)',
    source: 'ich',
    sourceNote: `${ICH}: long term 25 °C ± 2 °C / 60 % RH ± 5 % RH.`,
    input: {
      kind: 'constant',
      name: '25 °C / 60 % RH',
      preset: 'ICH Q1A(R2) long term 25 °C / 60 % RH',
      setpointC: 25,
      rhPercent: 60,
      toleranceC: 2,
      toleranceRh: 5,
    },
  },
  {
    key: 'ich-30-65',
    label: '30 °C / 65 % RH (ICH intermediate, or long term)',
    source: 'ich',
    sourceNote: `${ICH}: intermediate 30 °C ± 2 °C / 65 % RH ± 5 % RH; also the alternative long-term condition.`,
    input: {
      kind: 'constant',
      name: '30 °C / 65 % RH',
      preset: 'ICH Q1A(R2) intermediate 30 °C / 65 % RH',
      setpointC: 30,
      rhPercent: 65,
      toleranceC: 2,
      toleranceRh: 5,
    },
  },
  {
    key: 'ich-40-75',
    label: '40 °C / 75 % RH (ICH accelerated)',
    source: 'ich',
    sourceNote: `${ICH}: accelerated 40 °C ± 2 °C / 75 % RH ± 5 % RH.`,
    input: {
      kind: 'constant',
      name: '40 °C / 75 % RH',
      preset: 'ICH Q1A(R2) accelerated 40 °C / 75 % RH',
      setpointC: 40,
      rhPercent: 75,
      toleranceC: 2,
      toleranceRh: 5,
    },
  },
  {
    key: 'oven-45',
    label: '45 °C oven',
    source: 'common',
    sourceNote: `${COMMON} A usual accelerated condition for cosmetics.`,
    input: { kind: 'constant', name: '45 °C oven', preset: '45 °C (common practice)', setpointC: 45, toleranceC: 2 },
  },
  {
    key: 'oven-50',
    label: '50 °C oven',
    source: 'common',
    sourceNote: COMMON,
    input: { kind: 'constant', name: '50 °C oven', preset: '50 °C (common practice)', setpointC: 50, toleranceC: 2 },
  },
  {
    key: 'freeze-thaw',
    label: 'Freeze-thaw −10 °C / 25 °C, 24 h each',
    source: 'common',
    sourceNote: `${COMMON} Usually 3 to 5 cycles.`,
    input: {
      kind: 'cycling',
      name: 'Freeze-thaw −10 / 25 °C',
      preset: 'Freeze-thaw −10 °C / 25 °C 24 h (common practice)',
      lowC: -10,
      highC: 25,
      hoursLow: 24,
      hoursHigh: 24,
    },
  },
  {
    key: 'window-daylight',
    label: 'Window daylight',
    source: 'common',
    sourceNote: `${COMMON} Samples in their pack on a sunny windowsill.`,
    input: { kind: 'light', name: 'Window daylight', preset: 'Window daylight (common practice)', lightSource: 'daylight' },
  },
  {
    key: 'centrifuge-3000',
    label: 'Centrifuge 3000 rpm, 30 min',
    source: 'common',
    sourceNote: `${COMMON} Enter your rotor's radius: the force in × g depends on it.`,
    input: {
      kind: 'mechanical',
      name: 'Centrifuge 3000 rpm 30 min',
      preset: 'Centrifuge 3000 rpm 30 min (common practice)',
      rpm: 3000,
      minutes: 30,
      radiusCm: 10,
    },
  },
];

export function presetByKey(key: string): StoragePreset | undefined {
  return STORAGE_PRESETS.find((p) => p.key === key);
}

/**
 * Ovens at or above this temperature get the heat-resistant-gloves caution, °C. Common practice, no
 * published source: a 40 °C climate cabinet is warm, not hot; from 45 °C ovens are handled with gloves.
 */
export const HOT_CAUTION_C = 45;
/**
 * At or below this temperature, °C, the cold caution speaks of cryogenic gloves and dry ice (a -80 °C
 * freezer, dry ice at about -78.5 °C). Common practice, no published source; a -10 °C or -20 °C
 * freezer gets only the frozen-surface caution.
 */
export const DEEP_COLD_C = -40;

export interface Caution {
  key: 'hot' | 'cold' | 'deep_cold' | 'uv' | 'centrifuge';
  text: string;
}

/** The line that follows a condition's cautions wherever they are listed in full. */
export const SAFETY_RULES = 'Follow your lab\'s safety rules and local regulations.';

/** What a caution needs to know of a condition (a storage condition row, or part of one). */
export interface CautionSubject {
  kind: string;
  setpointC?: number | null;
  lowC?: number | null;
  highC?: number | null;
  lightSource?: string | null;
}

/**
 * Short safety cautions for a condition (hot ovens, freeze-thaw and freezers, UV, centrifuges),
 * without the closing line: list them followed by SAFETY_RULES.
 */
export function conditionCautions(c: CautionSubject): Caution[] {
  const out: Caution[] = [];
  const hottest = c.kind === 'constant' ? c.setpointC : c.kind === 'cycling' ? c.highC : null;
  const coldest = c.kind === 'constant' ? c.setpointC : c.kind === 'cycling' ? c.lowC : null;
  if (hottest != null && hottest >= HOT_CAUTION_C) {
    out.push({
      key: 'hot',
      text: 'Hot surfaces and samples: use heat-resistant gloves when opening the oven or cabinet, and let containers cool before opening them.',
    });
  }
  if (coldest != null && coldest <= DEEP_COLD_C) {
    out.push({
      key: 'deep_cold',
      text: 'Very cold surfaces and samples, and dry ice, cause cold burns: wear insulated cryogenic gloves and eye protection. Dry ice gives off carbon dioxide: use it only with good ventilation, never in a sealed container or small closed room.',
    });
  } else if (coldest != null && coldest <= 0) {
    out.push({
      key: 'cold',
      text: 'Frozen samples and freezer shelves: handle them with dry gloves, as wet skin can stick to frozen metal; let containers warm up closed so no water condenses inside.',
    });
  }
  if (c.kind === 'light' && c.lightSource === 'uv_cabinet') {
    out.push({
      key: 'uv',
      text: 'UV light harms eyes and skin: keep the cabinet closed while the lamp is on; switch it off, or wear UV-blocking eye protection and gloves, before opening.',
    });
  }
  if (c.kind === 'mechanical') {
    out.push({ key: 'centrifuge', text: 'Centrifuge: balance the rotor, and keep the lid closed until it has stopped.' });
  }
  return out;
}

/** The cautions of several conditions as lines, each once, then SAFETY_RULES; empty when none apply. */
export function cautionLines(conditions: readonly CautionSubject[]): string[] {
  const lines = [...new Set(conditions.flatMap((c) => conditionCautions(c).map((x) => x.text)))];
  return lines.length ? [...lines, SAFETY_RULES] : [];
}
