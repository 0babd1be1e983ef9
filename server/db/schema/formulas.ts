/** Products, the lab's ingredient library, variants with their formula lines, and batches. */
import { sql } from 'drizzle-orm';
import { mysqlTable, varchar, text, int, date, datetime, json, mysqlEnum, decimal, uniqueIndex, index } from 'drizzle-orm/mysql-core';
import { PRODUCT_TYPES, INGREDIENT_FUNCTIONS } from '../../../shared/domain';
import { createdAt, pk, ref, labs, users } from './core';

const updatedAt = () =>
  datetime('updated_at', { mode: 'date', fsp: 3 }).notNull().default(sql`CURRENT_TIMESTAMP(3)`).$onUpdate(() => new Date());

export const products = mysqlTable(
  'products',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    name: varchar('name', { length: 120 }).notNull(),
    type: mysqlEnum('type', PRODUCT_TYPES).notNull(),
    notes: text('notes'),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
    updatedAt: updatedAt(),
  },
  (t) => [uniqueIndex('products_lab_name_uq').on(t.labId, t.name)],
);

export const ingredients = mysqlTable(
  'ingredients',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    tradeName: varchar('trade_name', { length: 120 }).notNull(),
    inciName: varchar('inci_name', { length: 250 }).notNull(),
    function: mysqlEnum('function', INGREDIENT_FUNCTIONS).notNull(),
    /** Supplier's recommended use range, % w/w; either end optional. */
    useMinPercent: decimal('use_min_percent', { precision: 7, scale: 4, mode: 'number' }),
    useMaxPercent: decimal('use_max_percent', { precision: 7, scale: 4, mode: 'number' }),
    supplier: varchar('supplier', { length: 120 }),
    notes: text('notes'),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('ingredients_lab_trade_uq').on(t.labId, t.tradeName)],
);

export const variants = mysqlTable(
  'variants',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    productId: ref('product_id').notNull().references(() => products.id),
    /** Short code shown everywhere, e.g. "A", "B2". Unique within the product. */
    code: varchar('code', { length: 16 }).notNull(),
    name: varchar('name', { length: 160 }).notNull(),
    notes: text('notes'),
    derivedFromId: ref('derived_from_id'),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
    updatedAt: updatedAt(),
  },
  (t) => [uniqueIndex('variants_product_code_uq').on(t.productId, t.code), index('variants_lab_idx').on(t.labId)],
);

export const formulaLines = mysqlTable(
  'formula_lines',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    variantId: ref('variant_id').notNull().references(() => variants.id),
    position: int('position').notNull(),
    ingredientId: ref('ingredient_id').notNull().references(() => ingredients.id),
    /** Phase letter (A, B, C...) or free text such as "cool-down". */
    phase: varchar('phase', { length: 24 }).notNull().default('A'),
    percent: decimal('percent', { precision: 8, scale: 4, mode: 'number' }).notNull(),
  },
  (t) => [index('formula_lines_variant_idx').on(t.variantId, t.position)],
);

export const batches = mysqlTable(
  'batches',
  {
    id: pk(),
    labId: ref('lab_id').notNull().references(() => labs.id),
    variantId: ref('variant_id').notNull().references(() => variants.id),
    lotCode: varchar('lot_code', { length: 40 }).notNull(),
    madeOn: date('made_on', { mode: 'string' }).notNull(),
    sizeGrams: decimal('size_grams', { precision: 10, scale: 2, mode: 'number' }).notNull(),
    packaging: varchar('packaging', { length: 200 }).notNull(),
    fillAmount: decimal('fill_amount', { precision: 8, scale: 2, mode: 'number' }),
    fillUnit: mysqlEnum('fill_unit', ['g', 'mL']),
    /** Temperature the product was filled at, °C (the microbial-risk panel's hot-filling factor). */
    fillingTempC: decimal('filling_temp_c', { precision: 5, scale: 1, mode: 'number' }),
    notes: text('notes'),
    /** The formula as it was when the batch was made: later edits to the variant do not change it. */
    formulaSnapshot: json('formula_snapshot').notNull(),
    /** Raw-material lot and supplier per line of the snapshot, by the line's position. */
    materialLots: json('material_lots').$type<{ position: number; lot: string; supplier: string }[]>(),
    createdBy: ref('created_by').references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('batches_lab_lot_uq').on(t.labId, t.lotCode), index('batches_variant_idx').on(t.variantId)],
);
