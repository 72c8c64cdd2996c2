import type { Knex } from 'knex';

/**
 * Induction sessions: an instructor-led practical session for a machine group, with seats. When it is held at a
 * machine, its machine time is a class block in `bookings` (booking_id), so nobody books the machine over it.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('induction_sessions', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('group_id').notNullable().references('machine_groups.id');
    t.text('kind').notNullable().defaultTo('first');
    t.timestamp('starts_at', { useTz: true }).notNullable();
    t.timestamp('ends_at', { useTz: true }).notNullable();
    t.uuid('machine_id').references('machines.id');
    t.text('place').notNullable();
    t.integer('capacity').notNullable().defaultTo(4);
    t.text('bring').notNullable().defaultTo('');
    t.uuid('instructor_id').notNullable().references('people.id');
    t.uuid('booking_id').references('bookings.id');
    t.text('state').notNullable().defaultTo('published');
    t.timestamp('cancelled_at', { useTz: true });
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['group_id', 'starts_at']);
  });
  await knex.raw(`
    ALTER TABLE induction_sessions
      ADD CONSTRAINT induction_sessions_kind CHECK (kind IN ('first', 'refresher')),
      ADD CONSTRAINT induction_sessions_state CHECK (state IN ('published', 'cancelled')),
      ADD CONSTRAINT induction_sessions_capacity CHECK (capacity BETWEEN 1 AND 50),
      ADD CONSTRAINT induction_sessions_range CHECK (ends_at > starts_at)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
