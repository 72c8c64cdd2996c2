import type { Knex } from 'knex';

/** Provider webhook events already handled (a re-delivered event is acknowledged and ignored). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('payment_events', (t) => {
    t.text('id').primary();
    t.text('type').notNullable();
    t.timestamp('received_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
