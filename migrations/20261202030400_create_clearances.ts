import type { Knex } from 'knex';

/** A person's clearance for a machine group: state, level, expiry; one row per person and group. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('clearances', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('person_id').notNullable().references('people.id');
    t.uuid('group_id').notNullable().references('machine_groups.id');
    t.text('state').notNullable().defaultTo('quiz due');
    t.text('level').notNullable().defaultTo('basic');
    t.timestamp('quiz_passed_at', { useTz: true });
    t.timestamp('cleared_at', { useTz: true });
    t.timestamp('expires_at', { useTz: true });
    t.uuid('signed_off_by').references('people.id');
    t.text('suspended_from');
    t.text('suspended_reason');
    t.timestamp('suspended_at', { useTz: true });
    t.uuid('suspended_by').references('people.id');
    t.timestamp('lapse_warned_for', { useTz: true });
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.unique(['person_id', 'group_id']);
    t.index(['state', 'expires_at']);
    t.index(['group_id', 'state', 'quiz_passed_at']);
  });
  await knex.raw(`
    ALTER TABLE clearances
      ADD CONSTRAINT clearances_state CHECK (state IN ('quiz due', 'awaiting sign-off', 'cleared', 'lapsed', 'suspended')),
      ADD CONSTRAINT clearances_level CHECK (level IN ('basic', 'advanced')),
      ADD CONSTRAINT clearances_suspended_from CHECK (suspended_from IS NULL OR suspended_from IN ('quiz due', 'awaiting sign-off', 'cleared', 'lapsed')),
      ADD CONSTRAINT clearances_cleared_has_expiry CHECK (state <> 'cleared' OR expires_at IS NOT NULL),
      ADD CONSTRAINT clearances_suspension_complete CHECK (state <> 'suspended' OR (suspended_from IS NOT NULL AND suspended_reason IS NOT NULL))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
