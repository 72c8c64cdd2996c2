import type { Knex } from 'knex';

/** The course code or department budget a recharge tier is billed to (instead of a card). */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE people
      ADD COLUMN cost_centre text,
      ADD CONSTRAINT people_cost_centre_shape CHECK (cost_centre IS NULL OR cost_centre ~ '^[A-Za-z0-9][A-Za-z0-9 ._/-]{0,39}$')
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
