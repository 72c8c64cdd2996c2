import type { Knex } from 'knex';

/** Practical sign-offs: the checklist as ticked, notes, and the instructor (never the person themselves). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('signoffs', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('clearance_id').notNullable().references('clearances.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.uuid('group_id').notNullable().references('machine_groups.id');
    t.uuid('instructor_id').notNullable().references('people.id');
    t.text('level').notNullable();
    t.jsonb('checklist').notNullable();
    t.text('notes').notNullable().defaultTo('');
    t.timestamp('signed_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['person_id', 'signed_at']);
  });
  await knex.raw(`
    ALTER TABLE signoffs
      ADD CONSTRAINT signoffs_not_self CHECK (instructor_id <> person_id),
      ADD CONSTRAINT signoffs_level CHECK (level IN ('basic', 'advanced'))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
