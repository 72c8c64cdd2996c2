import type { Knex } from 'knex';

/**
 * Each charge keeps the tier it was priced at, so revenue by tier does not move when a person changes tier later.
 * Existing charges take their person's tier of today (the best record there is).
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE charges ADD COLUMN tier text;
    UPDATE charges c SET tier = p.tier FROM people p WHERE p.id = c.person_id;
    ALTER TABLE charges
      ALTER COLUMN tier SET NOT NULL,
      ADD CONSTRAINT charges_tier CHECK (tier IN ('student', 'staff', 'community', 'commercial'));
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
