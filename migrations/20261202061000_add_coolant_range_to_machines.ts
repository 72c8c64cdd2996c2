import type { Knex } from 'knex';

/**
 * The chiller range a water-cooled machine may be started in (°C). Null means the common-practice default
 * (15–25 °C for glass tubes); air-cooled machines have no chiller reading.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('machines', (t) => {
    t.decimal('coolant_min_c', 4, 1);
    t.decimal('coolant_max_c', 4, 1);
  });
  await knex.raw(`
    ALTER TABLE machines
      ADD CONSTRAINT machines_coolant_range CHECK (
        (coolant_min_c IS NULL OR coolant_min_c BETWEEN 0 AND 40) AND
        (coolant_max_c IS NULL OR coolant_max_c BETWEEN 0 AND 40) AND
        (coolant_min_c IS NULL OR coolant_max_c IS NULL OR coolant_min_c < coolant_max_c))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
