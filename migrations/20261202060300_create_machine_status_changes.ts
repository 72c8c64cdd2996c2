import type { Knex } from 'knex';

/** Every change of a machine's status, with why: the source of "time out of service" in reports. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('machine_status_changes', (t) => {
    t.bigIncrements('id').primary();
    t.uuid('machine_id').notNullable().references('machines.id');
    t.text('from_status').notNullable();
    t.text('to_status').notNullable();
    t.timestamp('changed_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.uuid('actor_id').references('people.id');
    t.uuid('fault_id').references('faults.id');
    t.text('reason').notNullable().defaultTo('');
    t.index(['machine_id', 'changed_at']);
  });
  await knex.raw(`
    ALTER TABLE machine_status_changes
      ADD CONSTRAINT msc_from CHECK (from_status IN ('in service', 'degraded', 'out of service')),
      ADD CONSTRAINT msc_to CHECK (to_status IN ('in service', 'degraded', 'out of service'));
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
