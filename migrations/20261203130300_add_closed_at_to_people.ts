import type { Knex } from 'knex';

/** When the person closed their own account (anonymised, sign-in disabled); NULL while it is open. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE people ADD COLUMN closed_at timestamptz');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
