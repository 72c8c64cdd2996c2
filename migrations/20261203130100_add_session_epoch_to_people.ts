import type { Knex } from 'knex';

/**
 * A number every session token of the person carries; raising it (password reset or change, account closed)
 * ends every session issued before.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE people ADD COLUMN session_epoch integer NOT NULL DEFAULT 0');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
