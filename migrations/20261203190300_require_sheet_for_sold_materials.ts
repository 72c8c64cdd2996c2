import type { Knex } from 'knex';

/**
 * A material the space sells names its sheet. NOT VALID: a row the link could not be made for stays readable (Material
 * rules asks for its sheet) and must be given one at its next change.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`ALTER TABLE materials ADD CONSTRAINT materials_sold_has_sheet CHECK (NOT sold_by_space OR sheet_sku IS NOT NULL) NOT VALID;`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
