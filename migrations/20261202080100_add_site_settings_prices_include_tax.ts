import type { Knex } from 'knex';

/** Whether prices are entered and shown with tax included (common for GST) or with tax added on top. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE site_settings ADD COLUMN prices_include_tax boolean NOT NULL DEFAULT true');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
