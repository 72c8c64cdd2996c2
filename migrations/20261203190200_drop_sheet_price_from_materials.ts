import type { Knex } from 'knex';

/** The material's own sheet price goes (its constraints with it): the price version's sheet list is the one source. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`ALTER TABLE materials DROP COLUMN sheet_price_minor;`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
