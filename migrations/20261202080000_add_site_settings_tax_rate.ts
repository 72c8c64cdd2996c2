import type { Knex } from 'knex';

/** The sales tax (GST, VAT) rate in percent, e.g. 15 for New Zealand GST; up to three decimals (8.875). */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE site_settings
      ADD COLUMN tax_rate_percent numeric(6,3) NOT NULL DEFAULT 0
      CONSTRAINT site_settings_tax_rate_range CHECK (tax_rate_percent >= 0 AND tax_rate_percent <= 100)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
