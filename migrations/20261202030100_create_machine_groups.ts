import type { Knex } from 'knex';

/** Machine groups: one clearance covers every machine of a group; validity, refresher rule and practical checklist per group. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('machine_groups', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.text('code').notNullable().unique();
    t.text('name').notNullable();
    t.integer('validity_days').notNullable().defaultTo(365);
    t.text('refresher').notNullable().defaultTo('quiz');
    t.jsonb('checklist').notNullable().defaultTo(knex.raw("'[]'::jsonb"));
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw(`
    ALTER TABLE machine_groups
      ADD CONSTRAINT machine_groups_code_shape CHECK (code ~ '^[a-z0-9][a-z0-9-]{1,31}$'),
      ADD CONSTRAINT machine_groups_validity CHECK (validity_days BETWEEN 1 AND 3660),
      ADD CONSTRAINT machine_groups_refresher CHECK (refresher IN ('quiz', 'quiz_and_signoff')),
      ADD CONSTRAINT machine_groups_checklist CHECK (jsonb_typeof(checklist) = 'array')
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
