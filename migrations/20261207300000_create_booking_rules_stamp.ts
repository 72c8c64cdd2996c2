import type { Knex } from 'knex';

/**
 * One row whose `stamp` changes with every committed write to the booking rules (rules, opening hours, tier quotas,
 * closures): app processes keep the rules in memory under the stamp they were read with, and a booking or feed reads
 * the stamp in a statement it runs anyway, so a changed stamp means "read the rules again".
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    CREATE TABLE booking_rules_stamp (
      id smallint PRIMARY KEY DEFAULT 1 CHECK (id = 1),
      stamp uuid NOT NULL DEFAULT gen_random_uuid()
    )`);
  await knex.raw('INSERT INTO booking_rules_stamp (id) VALUES (1)');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
