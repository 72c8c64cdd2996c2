import type { Knex } from 'knex';

/**
 * A receipt's date is when the money was taken (or recharged), not when the hold was made, and it has a readable
 * number (site prefix, year, sequence), given once at that moment.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE charges ADD COLUMN charged_at timestamptz, ADD COLUMN receipt_number text;
    CREATE UNIQUE INDEX charges_receipt_number ON charges (receipt_number) WHERE receipt_number IS NOT NULL;
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
