import type { Knex } from 'knex';

/** Closures: a machine (or, with no machine, the whole site) is closed for a range, with a reason shown to people. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('closures', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('machine_id').references('machines.id').onDelete('CASCADE');
    t.timestamp('starts_at', { useTz: true }).notNullable();
    t.timestamp('ends_at', { useTz: true }).notNullable();
    t.text('reason').notNullable();
    t.uuid('created_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['machine_id', 'starts_at']);
  });
  await knex.raw(`
    ALTER TABLE closures
      ADD CONSTRAINT closures_span CHECK (starts_at < ends_at),
      ADD CONSTRAINT closures_reason CHECK (length(reason) BETWEEN 1 AND 200)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
