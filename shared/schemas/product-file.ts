/** The product file: microbial-risk panel input and documents (bodies and answers). */
import { z } from 'zod';
import { PACK_TYPES, type Factor, type RiskInputs } from '../compute/microbial-risk';
import { PAO_STEPS } from '../compute/period-after-opening';
import { calendarDate, text } from './common';

export const DOCUMENT_KINDS = ['challenge_test', 'safety_assessment', 'packaging_compatibility', 'supplier_certificate'] as const;
export type DocumentKind = (typeof DOCUMENT_KINDS)[number];
export const DOCUMENT_KIND_LABELS: Record<DocumentKind, string> = {
  challenge_test: 'Challenge test (preservative efficacy)',
  safety_assessment: 'Safety assessment',
  packaging_compatibility: 'Packaging compatibility',
  supplier_certificate: 'Supplier certificate',
};
/** ISO 11930 acceptance criteria: A, B, or neither. */
export const ISO11930_CRITERIA = ['A', 'B', 'not_met'] as const;
export type Iso11930Criteria = (typeof ISO11930_CRITERIA)[number];
/** The five test organisms of ISO 11930 (from memory). */
export const ISO11930_ORGANISMS = ['Pseudomonas aeruginosa', 'Staphylococcus aureus', 'Escherichia coli', 'Candida albicans', 'Aspergillus brasiliensis'] as const;
export const DOCUMENT_MAX_BYTES = 10 * 1024 * 1024;

const source = text().trim().max(200).nullable().optional();

/** What the formulator enters in the risk panel; formula shares come from the formula lines. */
export const riskInput = z.strictObject({
  ph: z.number({ error: 'Enter a pH between 0 and 14' }).min(0, 'pH is between 0 and 14').max(14, 'pH is between 0 and 14').nullable(),
  phSource: source,
  waterActivity: z.number({ error: 'Enter a water activity between 0 and 1' }).min(0, 'Water activity is between 0 and 1').max(1, 'Water activity is between 0 and 1').nullable(),
  waterActivitySource: source,
  /** Only when the formula lines cannot show it (an alcohol inside a blend); else the formula's share is used. */
  alcoholPercent: z.number({ error: 'Enter a share in % w/w' }).min(0, 'At least 0 %').max(100, 'Alcohol cannot be above 100 %').nullable().optional(),
  fillingTempC: z.number({ error: 'Enter a temperature in °C' }).min(-20, 'At least -20 °C').max(150, 'At most 150 °C').nullable(),
  fillingTempSource: source,
  pack: z.enum(PACK_TYPES, { error: 'Choose a pack' }).nullable(),
  solventBased: z.boolean(),
  oxidising: z.boolean(),
  inUseMonths: z.number().int('Whole months').min(0, 'At least 0').max(120, 'At most 120 months').nullable(),
  decidedPaoMonths: z.literal([...PAO_STEPS], { error: 'Choose 6, 12, 18 or 24 months' }).nullable(),
  note: text().trim().max(2000).nullable().optional(),
});
export type RiskInput = z.infer<typeof riskInput>;
export type RiskEntered = RiskInput;

/** Every factor input an assessment was made with (entered or derived). */
export type RiskSnapshot = RiskInputs;

export interface RiskView {
  variantId: number;
  /** From the formula lines now. */
  formula: { waterPercent: number; alcoholPercent: number; aluminiumChlorohydratePercent: number };
  /** Proposed values for an empty panel: the study's initial readings and the latest batch. */
  proposed: {
    ph: number | null;
    phSource: string | null;
    waterActivity: number | null;
    waterActivitySource: string | null;
    pack: (typeof PACK_TYPES)[number] | null;
    packSource: string | null;
    fillingTempC: number | null;
    fillingTempSource: string | null;
  };
  /**
   * In-use data from the variant's studies (a storage condition marked "in use, opened daily"):
   * months without a failure, and where they come from; null when no study has such a condition.
   * It wins over a hand-entered figure.
   */
  inUse: { months: number | null; source: string } | null;
  /** The shelf life the period after opening is held to: a signed decision's, else the engine's suggestion. */
  shelfLife: { months: number; source: string } | null;
  assessment: null | {
    entered: RiskEntered;
    factors: Factor[];
    lowRisk: boolean;
    text: string;
    suggestedPao: { months: number | null; reasons: string[]; basis: string };
    decidedPaoMonths: number | null;
    updatedBy: string;
    updatedAt: string;
    /** The formula or inputs changed since it was made: names of the inputs that differ. */
    outOfDate: string[];
  };
  caution: string;
}

export const organismResult = z.strictObject({
  organism: z.enum(ISO11930_ORGANISMS, { error: 'Choose an ISO 11930 organism' }),
  result: z.enum(['meets', 'fails'], { error: 'Meets or fails' }),
});
export type OrganismResult = z.infer<typeof organismResult>;

/** The form fields sent with an uploaded document (multipart: every value a string; organisms as JSON). */
export const documentMeta = z
  .strictObject({
    kind: z.enum(DOCUMENT_KINDS, { error: 'Choose the kind of document' }),
    title: text().trim().min(1, 'Give the document a title').max(160),
    documentDate: calendarDate,
    author: text().trim().min(1, 'Who wrote or issued it').max(120),
    summary: text().trim().min(1, 'Summarise it in a sentence').max(2000),
    criteria: z.enum(ISO11930_CRITERIA, { error: 'A, B or not met' }).optional(),
    organisms: z
      .string()
      .max(4000)
      .transform((s, ctx) => {
        try {
          return JSON.parse(s) as unknown;
        } catch {
          ctx.addIssue({ code: 'custom', message: 'Not valid JSON' });
          return z.NEVER;
        }
      })
      .pipe(z.array(organismResult).max(10))
      .optional(),
  })
  .superRefine((v, ctx) => {
    if (v.kind === 'challenge_test' && !v.criteria) ctx.addIssue({ code: 'custom', path: ['criteria'], message: 'A challenge test report says whether ISO 11930 criteria A or B were met' });
    if (v.kind !== 'challenge_test' && (v.criteria || v.organisms)) ctx.addIssue({ code: 'custom', path: ['criteria'], message: 'Only a challenge test has criteria and organisms' });
  });
export type DocumentMeta = z.infer<typeof documentMeta>;

export interface DocumentView {
  id: number;
  kind: DocumentKind;
  title: string;
  documentDate: string;
  author: string;
  summary: string;
  criteria: Iso11930Criteria | null;
  organisms: OrganismResult[] | null;
  mime: string;
  bytes: number;
  sha256: string;
  originalName: string;
  variantId: number | null;
  variantCode: string | null;
  studyId: number | null;
  uploadedBy: string;
  uploadedAt: string;
  url: string;
}

/** Expected vs present documents of a study, per variant. */
export interface ProductFileView {
  documents: DocumentView[];
  variants: {
    variantId: number;
    code: string;
    name: string;
    /** null: no risk assessment yet. */
    lowRisk: boolean | null;
    riskText: string | null;
    outOfDate: boolean;
    paoMonths: number | null;
    paoSuggested: number | null;
    expected: { kind: DocumentKind; present: boolean; why: string }[];
  }[];
}
