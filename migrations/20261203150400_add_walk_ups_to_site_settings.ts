import type { Knex } from 'knex';

/** Whether a controller may start a walk-up session on a free machine during opening hours (off by default). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('site_settings', (t) => {
    t.boolean('walk_ups_allowed').notNullable().defaultTo(false);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
