import type { Knex } from 'knex';

/** One private calendar feed per person; only a hash of the token is kept, so revoking is deleting the row. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('calendar_feeds', (t) => {
    t.uuid('person_id').primary().references('people.id').onDelete('CASCADE');
    t.text('token_hash').notNullable().unique();
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
