import type { Knex } from 'knex';

/** The last receipt number given per year; taken with one atomic upsert, so concurrent charges never share a number. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    CREATE TABLE receipt_counters (
      year integer PRIMARY KEY,
      last_number integer NOT NULL CHECK (last_number > 0)
    )
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
