import type { Knex } from 'knex';

/** Attempts record the exact quiz version, the questions drawn, the answers and the score. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('quiz_attempts', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('quiz_version_id').notNullable().references('quiz_versions.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.uuid('group_id').notNullable().references('machine_groups.id');
    t.jsonb('drawn').notNullable();
    t.timestamp('started_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('submitted_at', { useTz: true });
    t.jsonb('answers');
    t.integer('score_pct');
    t.boolean('passed');
    t.jsonb('missed_topics');
    t.index(['person_id', 'group_id', 'started_at']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
