import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('audit_log', (t) => {
    t.bigIncrements('id').primary();
    t.timestamp('at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.uuid('actor_id').references('people.id');
    t.text('kind').notNullable();
    t.text('subject_type').notNullable();
    t.text('subject_id');
    t.text('summary').notNullable();
    t.jsonb('before');
    t.jsonb('after');
    t.index(['at']);
    t.index(['actor_id', 'at']);
    t.index(['kind', 'at']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
