import type { Knex } from 'knex';

/**
 * Bookings. occupied_until = ends_at + the machine's cool-down buffer at booking time. The exclusion
 * constraint lets no two active bookings (reserved, checked in, or a waitlist hold) of one machine
 * share a moment of [starts_at, occupied_until): PostgreSQL refuses the second with SQLSTATE 23P01.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('bookings', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('machine_id').notNullable().references('machines.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.text('kind').notNullable().defaultTo('personal');
    t.text('state').notNullable().defaultTo('reserved');
    t.timestamp('starts_at', { useTz: true }).notNullable();
    t.timestamp('ends_at', { useTz: true }).notNullable();
    t.timestamp('occupied_until', { useTz: true }).notNullable();
    t.text('course_name');
    t.text('notes').notNullable().defaultTo('');
    t.boolean('late_cancel').notNullable().defaultTo(false);
    t.timestamp('hold_expires_at', { useTz: true });
    t.timestamp('cancelled_at', { useTz: true });
    t.uuid('cancelled_by').references('people.id');
    t.timestamp('checked_in_at', { useTz: true });
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['person_id', 'starts_at']);
    t.index(['state', 'starts_at']);
  });
  await knex.raw(`
    ALTER TABLE bookings
      ADD CONSTRAINT bookings_kind CHECK (kind IN ('personal', 'class', 'hold')),
      ADD CONSTRAINT bookings_state CHECK (state IN ('reserved', 'checked in', 'completed', 'cancelled', 'no-show', 'bumped')),
      ADD CONSTRAINT bookings_span CHECK (starts_at < ends_at AND occupied_until >= ends_at),
      ADD CONSTRAINT bookings_course CHECK ((kind = 'class') = (course_name IS NOT NULL)),
      ADD CONSTRAINT bookings_hold CHECK ((kind = 'hold') = (hold_expires_at IS NOT NULL)),
      ADD CONSTRAINT bookings_notes CHECK (length(notes) <= 2000),
      ADD CONSTRAINT bookings_no_overlap EXCLUDE USING gist (
        machine_id WITH =,
        tstzrange(starts_at, occupied_until, '[)') WITH &&
      ) WHERE (state IN ('reserved', 'checked in'))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
