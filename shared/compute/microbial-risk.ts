/**
 * Microbiologically low-risk products, after ISO 29621 (Cosmetics - Microbiology - Guidelines for the
 * risk assessment and identification of microbiologically low-risk products). We do not have the
 * standard's text at hand: every threshold below is taken from public summaries of it by testing
 * laboratories, checked only against each other ("public summary"), or from memory where marked.
 *
 * The outcome is guidance for the safety assessor, never a decision.
 * Pure functions: no I/O, no clock.
 */

/** pH at most this is hostile to most micro-organisms. Public summary of ISO 29621. */
export const PH_ACID_MAX = 3.0;
/** pH at least this is hostile to most micro-organisms. Public summary of ISO 29621. */
export const PH_ALKALI_MIN = 10.0;
/** Water activity below this: too little free water for most bacteria and moulds. Public summary of ISO 29621. */
export const WATER_ACTIVITY_BELOW = 0.75;
/** Ethanol or other alcohol above this share (% w/w). Public summary of ISO 29621 (some summaries say "at least 20 %"). */
export const ALCOHOL_ABOVE_PERCENT = 20;
/** Filled hot, above this temperature (°C). Public summary of ISO 29621. */
export const FILLING_TEMP_ABOVE_C = 65;
/** Aluminium chlorohydrate above this share (% w/w). Public summary of ISO 29621 (antiperspirant salts). */
export const ALUMINIUM_CHLOROHYDRATE_ABOVE_PERCENT = 25;
/** Anhydrous: no water among the formula lines (water share 0 % w/w). Public summary of ISO 29621. */
export const ANHYDROUS_WATER_PERCENT = 0;

export const PACK_TYPES = ['open_jar', 'narrow_orifice', 'airless_pump', 'single_use'] as const;
export type PackType = (typeof PACK_TYPES)[number];
export const PACK_LABELS: Record<PackType, string> = {
  open_jar: 'Open jar (fingers in the product)',
  narrow_orifice: 'Narrow orifice (tube, pump, dropper)',
  airless_pump: 'Airless pump',
  single_use: 'Single use (sachet, ampoule)',
};

export const RISK_CAUTION =
  'Guidance for the safety assessor, not a decision: whether a challenge test is needed, and the period after opening, are decided by a qualified safety assessor under the local regulations (in the EU, Regulation 1223/2009, Annex I).';

export interface RiskInputs {
  /** % w/w of water among the formula lines (from the formula); null when unknown. */
  waterPercent: number | null;
  /** % w/w of ethanol or other short-chain alcohol (from the formula). */
  alcoholPercent: number | null;
  /** % w/w of aluminium chlorohydrate (from the formula). */
  aluminiumChlorohydratePercent: number | null;
  ph: number | null;
  waterActivity: number | null;
  fillingTempC: number | null;
  solventBased: boolean;
  oxidising: boolean;
  pack: PackType | null;
}

export type FactorKey =
  | 'ph_acid'
  | 'ph_alkaline'
  | 'water_activity'
  | 'anhydrous'
  | 'alcohol'
  | 'filling_temperature'
  | 'solvent_based'
  | 'oxidising'
  | 'aluminium_chlorohydrate'
  | 'pack';

export interface Factor {
  key: FactorKey;
  label: string;
  /** The threshold in words, e.g. "pH ≤ 3.0". */
  threshold: string;
  /** The value in words, or null when not known. */
  value: string | null;
  /** null: not known, so not counted. */
  met: boolean | null;
  /** Physico-chemical factors make a product low risk alone; manufacture and pack only support. */
  alone: boolean;
  source: string;
}

export interface RiskOutcome {
  lowRisk: boolean;
  factors: Factor[];
  /** Labels of the factors that make it low risk. */
  by: string[];
  text: string;
  caution: string;
}

const PUBLIC = 'ISO 29621, public summary';
const fmt = (n: number, d = 2) => String(Math.round(n * 10 ** d) / 10 ** d);

export const phAcidMet = (ph: number) => ph <= PH_ACID_MAX;
export const phAlkalineMet = (ph: number) => ph >= PH_ALKALI_MIN;
export const waterActivityMet = (aw: number) => aw < WATER_ACTIVITY_BELOW;
export const anhydrousMet = (waterPercent: number) => waterPercent <= ANHYDROUS_WATER_PERCENT;
export const alcoholMet = (percent: number) => percent > ALCOHOL_ABOVE_PERCENT;
export const fillingTempMet = (c: number) => c > FILLING_TEMP_ABOVE_C;
export const aluminiumChlorohydrateMet = (percent: number) => percent > ALUMINIUM_CHLOROHYDRATE_ABOVE_PERCENT;
/** A pack that keeps fingers and air out (from memory: the standard counts packaging as a further factor). */
export const protectivePack = (pack: PackType) => pack !== 'open_jar';

function num(key: FactorKey, label: string, threshold: string, v: number | null, unit: string, test: (n: number) => boolean, alone = true): Factor {
  return { key, label, threshold, value: v === null ? null : `${fmt(v)}${unit}`, met: v === null ? null : test(v), alone, source: PUBLIC };
}

export function assessRisk(i: RiskInputs): RiskOutcome {
  const factors: Factor[] = [
    num('ph_acid', 'Acid pH', `pH ≤ ${PH_ACID_MAX.toFixed(1)}`, i.ph, '', phAcidMet),
    num('ph_alkaline', 'Alkaline pH', `pH ≥ ${PH_ALKALI_MIN.toFixed(1)}`, i.ph, '', phAlkalineMet),
    num('water_activity', 'Water activity', `aw < ${WATER_ACTIVITY_BELOW}`, i.waterActivity, '', waterActivityMet),
    num('anhydrous', 'Anhydrous (no water in the formula)', 'water 0 % w/w', i.waterPercent, ' % w/w water', anhydrousMet),
    num('alcohol', 'Ethanol or other alcohol', `> ${ALCOHOL_ABOVE_PERCENT} % w/w`, i.alcoholPercent, ' % w/w', alcoholMet),
    num('aluminium_chlorohydrate', 'Aluminium chlorohydrate', `> ${ALUMINIUM_CHLOROHYDRATE_ABOVE_PERCENT} % w/w`, i.aluminiumChlorohydratePercent, ' % w/w', aluminiumChlorohydrateMet),
    { key: 'solvent_based', label: 'Solvent-based product', threshold: 'yes', value: i.solventBased ? 'yes' : 'no', met: i.solventBased, alone: true, source: PUBLIC },
    { key: 'oxidising', label: 'Oxidising product (e.g. hair dye developer)', threshold: 'yes', value: i.oxidising ? 'yes' : 'no', met: i.oxidising, alone: true, source: PUBLIC },
    num('filling_temperature', 'Hot filling', `> ${FILLING_TEMP_ABOVE_C} °C`, i.fillingTempC, ' °C', fillingTempMet, false),
    {
      key: 'pack',
      label: 'Protective pack',
      threshold: 'not an open jar',
      value: i.pack ? PACK_LABELS[i.pack] : null,
      met: i.pack ? protectivePack(i.pack) : null,
      alone: false,
      source: 'ISO 29621, from memory',
    },
  ];
  const by = factors.filter((f) => f.alone && f.met === true).map((f) => f.label.replace(/ \(.*\)$/, '').toLowerCase());
  const lowRisk = by.length > 0;
  const support = factors.filter((f) => !f.alone && f.met === true).map((f) => f.label.toLowerCase());
  const supportText = support.length ? ` Also in its favour: ${support.join(' and ')}.` : '';
  const text = lowRisk
    ? `Low risk by ${by.join(' and ')}: a challenge test is usually not needed.${supportText}`
    : `Not low risk: a preservative efficacy test to ISO 11930 is expected.${support.length ? ` ${capital(support.join(' and '))} ${support.length === 1 ? 'lowers' : 'lower'} the risk but ${support.length === 1 ? 'does' : 'do'} not make the product low risk alone.` : ''}`;
  return { lowRisk, factors, by, text, caution: RISK_CAUTION };
}

const capital = (s: string) => s.charAt(0).toUpperCase() + s.slice(1);

/** INCI names read as water. An ingredient "Aqua (and) X" counts wholly as water (the cautious side). */
const WATER_INCI = /^(aqua|water)\b/i;
/** INCI names read as ethanol or another short-chain alcohol (fatty alcohols such as Cetyl Alcohol are not). */
const ALCOHOL_INCI = /^(alcohol|alcohol denat\.?|ethanol|isopropyl alcohol|propyl alcohol)$/i;
const ACH_INCI = /^alumin(i)?um chlorohydrate$/i;

export interface FormulaLineForRisk {
  inciName: string;
  percent: number;
}

/** Water, alcohol and aluminium chlorohydrate shares (% w/w) from the formula lines' INCI names. */
export function formulaShares(lines: FormulaLineForRisk[]): { waterPercent: number; alcoholPercent: number; aluminiumChlorohydratePercent: number } {
  const sum = (re: RegExp) => Math.round(lines.filter((l) => re.test(l.inciName.trim())).reduce((s, l) => s + l.percent, 0) * 10_000) / 10_000;
  return { waterPercent: sum(WATER_INCI), alcoholPercent: sum(ALCOHOL_INCI), aluminiumChlorohydratePercent: sum(ACH_INCI) };
}

/** The factor inputs an assessment was made with; a change in any of them makes it out of date. */
export type FactorSnapshot = RiskInputs;

/** Which inputs differ between the stored assessment and today's (formula shares within 0.005 %). */
export function changedFactors(stored: FactorSnapshot, now: FactorSnapshot): (keyof FactorSnapshot)[] {
  const out: (keyof FactorSnapshot)[] = [];
  for (const k of Object.keys(now) as (keyof FactorSnapshot)[]) {
    const a = stored[k];
    const b = now[k];
    if (typeof a === 'number' && typeof b === 'number' ? Math.abs(a - b) > 0.005 : a !== b) out.push(k);
  }
  return out;
}

/** A pack type read from a batch's packaging text ("50 mL PET jar" -> open jar); null when unclear. */
export function packFromText(text: string): PackType | null {
  const t = text.toLowerCase();
  if (/airless/.test(t)) return 'airless_pump';
  if (/sachet|ampoule|single[- ]use|single[- ]dose/.test(t)) return 'single_use';
  if (/\bjar\b|\bpot\b|\btin\b/.test(t)) return 'open_jar';
  if (/tube|pump|dropper|bottle|spray|stick/.test(t)) return 'narrow_orifice';
  return null;
}
