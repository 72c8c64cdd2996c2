import type { Knex } from 'knex';

/** A person's membership tier: sets their weekly booking quota (and, later, their price). */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE people
      ADD COLUMN tier text NOT NULL DEFAULT 'community',
      ADD CONSTRAINT people_tier CHECK (tier IN ('student', 'staff', 'community', 'commercial'))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
