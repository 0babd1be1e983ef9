/**
 * Demo formulas for the invented Larkspur Skin Studio: an ingredient library, two products,
 * three variants and four batches. Invented data for the demo only: the trade names and
 * suppliers are made up; the INCI names are real names of common ingredients, and the use
 * ranges are plausible figures of the kind suppliers print, not anyone's published data.
 */
import { formulaTotal } from '../../shared/compute/formula';
import type { IngredientFunction, ProductType } from '../../shared/domain';
import type { DbOrTx } from '../db/client';
import { batches, ingredients, products, variants } from '../db/schema';
import { audit } from '../services/audit';
import { takeSnapshot, writeLines } from '../services/formulas';

interface DemoIngredient {
  key: string;
  tradeName: string;
  inciName: string;
  function: IngredientFunction;
  min?: number;
  max?: number;
  supplier: string;
  notes?: string;
}

export const DEMO_INGREDIENTS: DemoIngredient[] = [
  { key: 'water', tradeName: 'Deionised water', inciName: 'Aqua', function: 'solvent', supplier: 'In-house still', notes: 'Conductivity checked weekly.' },
  { key: 'glycerin', tradeName: 'Glycerin 99.5 % veg', inciName: 'Glycerin', function: 'humectant', min: 2, max: 10, supplier: 'Hollin Chemicals' },
  { key: 'phytate', tradeName: 'Phytic chelate 40', inciName: 'Sodium Phytate', function: 'other', min: 0.05, max: 0.2, supplier: 'Hollin Chemicals', notes: 'Chelating agent; add to the water phase.' },
  { key: 'xanthan', tradeName: 'Xanthan gum, clear grade', inciName: 'Xanthan Gum', function: 'thickener', min: 0.1, max: 1, supplier: 'Fenmoor Ingredients', notes: 'Disperse in glycerin before adding to water.' },
  { key: 'emulsifier', tradeName: 'Emulsifying wax CS-20', inciName: 'Cetearyl Alcohol (and) Ceteareth-20', function: 'emulsifier', min: 3, max: 6, supplier: 'Fenmoor Ingredients' },
  { key: 'cetyl', tradeName: 'Cetyl alcohol flakes', inciName: 'Cetyl Alcohol', function: 'thickener', min: 0.5, max: 5, supplier: 'Fenmoor Ingredients' },
  { key: 'almond', tradeName: 'Sweet almond oil, refined', inciName: 'Prunus Amygdalus Dulcis Oil', function: 'oil', supplier: 'Brightwell Oils' },
  { key: 'jojoba', tradeName: 'Jojoba oil, golden', inciName: 'Simmondsia Chinensis Seed Oil', function: 'oil', supplier: 'Brightwell Oils' },
  { key: 'shea', tradeName: 'Shea butter, refined', inciName: 'Butyrospermum Parkii Butter', function: 'butter', supplier: 'Brightwell Oils' },
  { key: 'calendula', tradeName: 'Calendula oil macerate', inciName: 'Helianthus Annuus Seed Oil (and) Calendula Officinalis Flower Extract', function: 'active', min: 1, max: 10, supplier: 'Meadowgate Botanicals' },
  { key: 'arrowroot', tradeName: 'Arrowroot powder', inciName: 'Maranta Arundinacea Root Powder', function: 'other', min: 1, max: 15, supplier: 'Meadowgate Botanicals', notes: 'Cuts the greasy feel of butters.' },
  { key: 'panthenol', tradeName: 'D-Panthenol 75 %', inciName: 'Panthenol', function: 'active', min: 0.5, max: 5, supplier: 'Hollin Chemicals' },
  { key: 'preservative', tradeName: 'Preservative PE-EHG', inciName: 'Phenoxyethanol (and) Ethylhexylglycerin', function: 'preservative', min: 0.5, max: 1, supplier: 'Hollin Chemicals', notes: 'Add below 40 °C. Broad spectrum; check the challenge test per formula.' },
  { key: 'tocopherol', tradeName: 'Vitamin E T-70', inciName: 'Tocopherol', function: 'antioxidant', min: 0.1, max: 0.5, supplier: 'Brightwell Oils', notes: 'Protects the oils from going rancid; not a preservative.' },
  { key: 'fragrance', tradeName: 'Meadow fragrance blend', inciName: 'Parfum', function: 'fragrance', min: 0.1, max: 0.5, supplier: 'Saltmarsh Aromatics', notes: 'Allergen declaration on file.' },
  { key: 'citric', tradeName: 'Citric acid 50 % solution', inciName: 'Aqua (and) Citric Acid', function: 'other', min: 0.01, max: 0.5, supplier: 'Hollin Chemicals', notes: 'pH adjustment, q.s.' },
];

type Line = [key: string, phase: string, percent: number];

const HAND_CREAM_A: Line[] = [
  ['water', 'A', 71.3],
  ['glycerin', 'A', 4],
  ['phytate', 'A', 0.1],
  ['emulsifier', 'B', 4],
  ['cetyl', 'B', 2],
  ['almond', 'B', 8],
  ['shea', 'B', 3],
  ['calendula', 'B', 5],
  ['panthenol', 'C', 1],
  ['preservative', 'C', 1],
  ['tocopherol', 'C', 0.3],
  ['fragrance', 'C', 0.3],
];

/** B: one more percent of emulsifier and 0.3 % xanthan, taken from the water. */
const HAND_CREAM_B: Line[] = [
  ['water', 'A', 70],
  ['glycerin', 'A', 4],
  ['xanthan', 'A', 0.3],
  ['phytate', 'A', 0.1],
  ['emulsifier', 'B', 5],
  ['cetyl', 'B', 2],
  ['almond', 'B', 8],
  ['shea', 'B', 3],
  ['calendula', 'B', 5],
  ['panthenol', 'C', 1],
  ['preservative', 'C', 1],
  ['tocopherol', 'C', 0.3],
  ['fragrance', 'C', 0.3],
];

/** Fragrance a little above the supplier's range on purpose, so the demo shows a range warning. */
const BODY_BUTTER_A: Line[] = [
  ['shea', 'A', 55],
  ['almond', 'A', 20],
  ['jojoba', 'A', 13.9],
  ['arrowroot', 'B', 10],
  ['tocopherol', 'C', 0.5],
  ['fragrance', 'C', 0.6],
];

function daysAgo(days: number, now: Date): string {
  const d = new Date(now.getTime() - days * 86_400_000);
  return d.toISOString().slice(0, 10);
}

export interface SeededFormulas {
  ingredients: Record<string, number>;
  products: { handCream: number; bodyButter: number };
  variants: { handCreamA: number; handCreamB: number; bodyButterA: number };
  batches: number[];
  lotCodes: string[];
}

/** Loads the demo catalogue into one lab (call inside the demo seed's transaction). */
export async function seedFormulas(tx: DbOrTx, labId: number, userId: number, now = new Date()): Promise<SeededFormulas> {
  const ing: Record<string, number> = {};
  for (const i of DEMO_INGREDIENTS) {
    const [{ id }] = await tx
      .insert(ingredients)
      .values({
        labId,
        tradeName: i.tradeName,
        inciName: i.inciName,
        function: i.function,
        useMinPercent: i.min ?? null,
        useMaxPercent: i.max ?? null,
        supplier: i.supplier,
        notes: i.notes ?? null,
      })
      .$returningId();
    ing[i.key] = id;
  }

  async function product(name: string, type: ProductType, notes: string) {
    const [{ id }] = await tx.insert(products).values({ labId, name, type, notes, createdBy: userId }).$returningId();
    return id;
  }

  async function variant(productId: number, code: string, name: string, lines: Line[], derivedFromId: number | null, notes: string | null) {
    const t = formulaTotal(lines.map(([, , percent]) => ({ percent })));
    if (!t.ok) throw new Error(`Demo variant ${code} "${name}" totals ${t.total} %, not 100 %`);
    const [{ id }] = await tx
      .insert(variants)
      .values({ labId, productId, code, name, notes, derivedFromId, createdBy: userId })
      .$returningId();
    await writeLines(
      tx,
      labId,
      id,
      lines.map(([key, phase, percent]) => ({ ingredientId: ing[key], phase, percent })),
    );
    return id;
  }

  const handCream = await product(
    'Calendula hand cream',
    'oil_in_water',
    'Everyday hand cream for the spring range. Target pH 5.5 ± 0.3, viscosity about 25 000 mPa·s.',
  );
  const bodyButter = await product(
    'Shea whipped body butter',
    'anhydrous_balm',
    'Whipped at room temperature after cooling to a soft set. Anhydrous: no water phase.',
  );
  const handCreamA = await variant(handCream, 'A', '4 % emulsifier', HAND_CREAM_A, null, 'First pilot. Slight thinning after two weeks at 40 °C.');
  const handCreamB = await variant(
    handCream,
    'B',
    '5 % emulsifier + 0.3 % xanthan',
    HAND_CREAM_B,
    handCreamA,
    'Derived from A to hold viscosity at 40 °C: emulsifier up by 1 %, xanthan added to the water phase.',
  );
  const bodyButterA = await variant(bodyButter, 'A', 'Shea 55 %, arrowroot 10 %', BODY_BUTTER_A, null, null);

  const plan: { variantId: number; prefix: string; days: number; size: number; packaging: string; fill: [number, 'g' | 'mL'] | null; notes: string | null }[] = [
    { variantId: handCreamA, prefix: 'CHC-A', days: 96, size: 1500, packaging: '50 mL PET jar, PP lid', fill: [50, 'mL'], notes: 'Pilot batch, 2 L vessel with overhead stirrer.' },
    { variantId: handCreamB, prefix: 'CHC-B', days: 61, size: 2000, packaging: '50 mL PET jar, PP lid', fill: [50, 'mL'], notes: null },
    { variantId: handCreamB, prefix: 'CHC-B', days: 30, size: 1200, packaging: '50 mL aluminium tube', fill: [50, 'mL'], notes: 'Tube compatibility check: same formula as the jar lot.' },
    { variantId: bodyButterA, prefix: 'SWB-A', days: 45, size: 1000, packaging: '100 g amber glass jar', fill: [100, 'g'], notes: 'Whipped 6 min at medium speed.' },
  ];
  const batchIds: number[] = [];
  const lotCodes: string[] = [];
  for (const b of plan) {
    const madeOn = daysAgo(b.days, now);
    let lotCode = `${b.prefix}-${madeOn.slice(2, 4)}${madeOn.slice(5, 7)}`;
    for (let n = 2; lotCodes.includes(lotCode); n++) lotCode = `${b.prefix}-${madeOn.slice(2, 4)}${madeOn.slice(5, 7)}-${n}`;
    // Recorded at the end of the making day; the formula snapshot is taken as the batch is recorded.
    const recordedAt = new Date(`${madeOn}T16:00:00Z`);
    const snapshot = await takeSnapshot(tx, labId, b.variantId, recordedAt);
    const [{ id }] = await tx
      .insert(batches)
      .values({
        labId,
        variantId: b.variantId,
        lotCode,
        madeOn,
        sizeGrams: b.size,
        packaging: b.packaging,
        fillAmount: b.fill?.[0] ?? null,
        fillUnit: b.fill?.[1] ?? null,
        notes: b.notes,
        formulaSnapshot: snapshot,
        createdBy: userId,
        createdAt: recordedAt,
      })
      .$returningId();
    batchIds.push(id);
    lotCodes.push(lotCode);
  }

  await audit(tx, {
    labId,
    userId: null,
    action: 'import',
    entity: 'formulas',
    entityId: null,
    newValue: { demo: true, ingredients: DEMO_INGREDIENTS.length, products: 2, variants: 3, batches: batchIds.length },
  });

  return {
    ingredients: ing,
    products: { handCream, bodyButter },
    variants: { handCreamA, handCreamB, bodyButterA },
    batches: batchIds,
    lotCodes,
  };
}
