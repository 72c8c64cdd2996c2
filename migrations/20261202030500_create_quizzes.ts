import type { Knex } from 'knex';

/** Each machine group has one quiz; its questions live in versions. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('quizzes', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('group_id').notNullable().references('machine_groups.id');
    t.text('title').notNullable();
    t.uuid('created_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.unique(['group_id']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
