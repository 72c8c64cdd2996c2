import type { Knex } from 'knex';

/**
 * Upkeep reminders sent to the stewards: one row per machine, kind of upkeep, state reached (`due soon`, `overdue`)
 * and service cycle (when that upkeep was last done; the epoch when never), so each is e-mailed once per cycle.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('upkeep_reminders', (t) => {
    t.bigIncrements('id').primary();
    t.uuid('machine_id').notNullable().references('machines.id').onDelete('CASCADE');
    t.text('kind').notNullable();
    t.text('state').notNullable();
    t.timestamp('cycle_from', { useTz: true }).notNullable();
    t.timestamp('due_at', { useTz: true });
    t.timestamp('sent_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.unique(['machine_id', 'kind', 'state', 'cycle_from']);
  });
  await knex.raw(`ALTER TABLE upkeep_reminders ADD CONSTRAINT upkeep_reminders_state CHECK (state IN ('due soon', 'overdue'))`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
