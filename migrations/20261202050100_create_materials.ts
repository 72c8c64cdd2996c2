import type { Knex } from 'knex';

/** The material catalogue: each material's rule (allowed / limited / blocked) with the reason members read. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('materials', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.text('name').notNullable();
    t.text('category').notNullable();
    t.specificType('composition', 'text[]').notNullable().defaultTo('{}');
    t.text('rule').notNullable();
    t.text('reason').notNullable();
    t.specificType('modes', 'text[]').notNullable().defaultTo('{}');
    t.decimal('max_cut_mm', 6, 2);
    t.decimal('density_g_cm3', 6, 3);
    t.decimal('heat_gasification_j_g', 8, 1);
    t.decimal('cut_efficiency', 4, 3);
    t.boolean('sold_by_space').notNullable().defaultTo(false);
    t.integer('sheet_price_minor');
    t.text('sheet_size');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw(`
    CREATE UNIQUE INDEX materials_name_unique ON materials (lower(name));
    ALTER TABLE materials
      ADD CONSTRAINT materials_name_shape CHECK (length(btrim(name)) BETWEEN 1 AND 120),
      ADD CONSTRAINT materials_category CHECK (category IN ('plastic','wood','paper','textile','leather','metal','mineral','foam','composite','rubber','other')),
      ADD CONSTRAINT materials_rule CHECK (rule IN ('allowed','limited','blocked')),
      ADD CONSTRAINT materials_reason CHECK (length(btrim(reason)) BETWEEN 1 AND 1000),
      ADD CONSTRAINT materials_modes CHECK (modes <@ ARRAY['cut','engrave','score']::text[]),
      ADD CONSTRAINT materials_max_cut CHECK (max_cut_mm IS NULL OR (max_cut_mm > 0 AND max_cut_mm <= 100)),
      ADD CONSTRAINT materials_density CHECK (density_g_cm3 IS NULL OR (density_g_cm3 > 0 AND density_g_cm3 <= 25)),
      ADD CONSTRAINT materials_heat CHECK (heat_gasification_j_g IS NULL OR (heat_gasification_j_g > 0 AND heat_gasification_j_g <= 100000)),
      ADD CONSTRAINT materials_efficiency CHECK (cut_efficiency IS NULL OR (cut_efficiency > 0 AND cut_efficiency <= 1)),
      ADD CONSTRAINT materials_price CHECK (sheet_price_minor IS NULL OR sheet_price_minor >= 0),
      ADD CONSTRAINT materials_sold_has_price CHECK (NOT sold_by_space OR sheet_price_minor IS NOT NULL)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
