import type { Knex } from 'knex';

/**
 * The site locale: the BCP 47 language-and-region tag every date, time, number and amount of the site is shown in
 * (en-NZ for the demo's region). Checked against what the runtime's Intl supports when an admin saves it.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw("ALTER TABLE site_settings ADD COLUMN locale text NOT NULL DEFAULT 'en-NZ' CHECK (length(locale) BETWEEN 2 AND 35)");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
