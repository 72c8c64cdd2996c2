import type { Knex } from 'knex';

/** Stewards' notes on a fault (triage, work done), oldest first: the fault's history. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('fault_notes', (t) => {
    t.bigIncrements('id').primary();
    t.uuid('fault_id').notNullable().references('faults.id');
    t.uuid('author_id').notNullable().references('people.id');
    t.text('body').notNullable();
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['fault_id', 'created_at']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
