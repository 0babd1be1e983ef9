/** Domain vocabularies shared by the database schema, the API and the client. */

export const PRODUCT_TYPES = [
  'oil_in_water',
  'water_in_oil',
  'anhydrous_balm',
  'anhydrous_scrub',
  'gel',
  'oil',
  'surfactant_wash',
  'other',
] as const;
export type ProductType = (typeof PRODUCT_TYPES)[number];

export const PRODUCT_TYPE_LABELS: Record<ProductType, string> = {
  oil_in_water: 'Oil-in-water emulsion',
  water_in_oil: 'Water-in-oil emulsion',
  anhydrous_balm: 'Anhydrous balm or butter',
  anhydrous_scrub: 'Anhydrous scrub',
  gel: 'Gel',
  oil: 'Oil',
  surfactant_wash: 'Surfactant wash',
  other: 'Other',
};

/** Anhydrous products: pH is read on a dispersion in water, and water activity is low. */
export const ANHYDROUS_TYPES: readonly ProductType[] = ['anhydrous_balm', 'anhydrous_scrub', 'oil'];

export const INGREDIENT_FUNCTIONS = [
  'emulsifier',
  'preservative',
  'antioxidant',
  'fragrance',
  'colorant',
  'butter',
  'oil',
  'active',
  'humectant',
  'thickener',
  'solvent',
  'other',
] as const;
export type IngredientFunction = (typeof INGREDIENT_FUNCTIONS)[number];

export const CONDITION_KINDS = ['constant', 'cycling', 'light', 'mechanical'] as const;
export type ConditionKind = (typeof CONDITION_KINDS)[number];

export const LIGHT_SOURCES = ['daylight', 'uv_cabinet'] as const;
export type LightSource = (typeof LIGHT_SOURCES)[number];
