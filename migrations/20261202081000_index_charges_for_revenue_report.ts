import type { Knex } from 'knex';

/** The revenue report sums charges in a revenue state by creation time: a partial index that covers the summed columns answers it from the index alone. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`CREATE INDEX charges_revenue_by_time ON charges (created_at) INCLUDE (machine_id, person_id, method, currency, amount_minor, refunded_minor, tax_minor) WHERE state IN ('captured', 'refunded', 'recharged', 'settled')`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
