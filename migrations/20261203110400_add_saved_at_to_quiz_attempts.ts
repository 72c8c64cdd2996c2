import type { Knex } from 'knex';

/** When the answers of an open attempt were last saved (each answer is saved as it is picked). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('quiz_attempts', (t) => {
    t.timestamp('answers_saved_at', { useTz: true });
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
