import type { Knex } from 'knex';

/** Badges a controller read that nobody holds: one row per badge (the latest sighting), listed for an hour. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('unknown_badge_sightings', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.text('badge_hash').notNullable().unique();
    t.text('last_four').notNullable();
    t.uuid('controller_id').notNullable().references('controllers.id');
    t.uuid('machine_id').notNullable().references('machines.id');
    t.timestamp('seen_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['seen_at']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
