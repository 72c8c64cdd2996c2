import type { Knex } from 'knex';

/** Per-minute rate (minor units) of a machine for a tier, in one price version. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('price_rates', (t) => {
    t.uuid('version_id').notNullable().references('price_versions.id').onDelete('CASCADE');
    t.uuid('machine_id').notNullable().references('machines.id');
    t.text('tier').notNullable();
    t.integer('per_minute_minor').notNullable();
    t.primary(['version_id', 'machine_id', 'tier']);
  });
  await knex.raw(`
    ALTER TABLE price_rates
      ADD CONSTRAINT price_rates_tier CHECK (tier IN ('student', 'staff', 'community', 'commercial')),
      ADD CONSTRAINT price_rates_amount CHECK (per_minute_minor >= 0)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
