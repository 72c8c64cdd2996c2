import type { Knex } from 'knex';

/**
 * A material the space sells names its sheet by the code in the price version's sheet list (Pricing), which holds
 * the one sheet price: the material no longer keeps a price of its own.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE materials ADD COLUMN sheet_sku text
      CONSTRAINT materials_sheet_sku_shape CHECK (sheet_sku IS NULL OR sheet_sku ~ '^[a-z0-9][a-z0-9-]{0,39}$');
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
