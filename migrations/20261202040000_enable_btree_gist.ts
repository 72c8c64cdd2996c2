import type { Knex } from 'knex';

/** btree_gist lets one exclusion constraint mix equality (machine) with range overlap (time). */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('CREATE EXTENSION IF NOT EXISTS btree_gist');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
