import type { Knex } from 'knex';

/** Weekly booking quota per person on a machine, by tier (no row: no limit). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('machine_tier_quotas', (t) => {
    t.uuid('machine_id').notNullable().references('machines.id').onDelete('CASCADE');
    t.text('tier').notNullable();
    t.integer('weekly_minutes').notNullable();
    t.primary(['machine_id', 'tier']);
  });
  await knex.raw(`
    ALTER TABLE machine_tier_quotas
      ADD CONSTRAINT mtq_tier CHECK (tier IN ('student', 'staff', 'community', 'commercial')),
      ADD CONSTRAINT mtq_minutes CHECK (weekly_minutes >= 0 AND weekly_minutes <= 10080)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
