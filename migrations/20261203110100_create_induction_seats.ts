import type { Knex } from 'knex';

/** Seats of an induction session: booked → present / absent, or cancelled; one live seat per person and session. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('induction_seats', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('session_id').notNullable().references('induction_sessions.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.text('state').notNullable().defaultTo('booked');
    t.timestamp('booked_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('cancelled_at', { useTz: true });
    t.timestamp('marked_at', { useTz: true });
    t.uuid('marked_by').references('people.id');
    t.uuid('signoff_id').references('signoffs.id');
    t.timestamp('reminded_at', { useTz: true });
    t.index(['person_id', 'state']);
  });
  await knex.raw(`ALTER TABLE induction_seats ADD CONSTRAINT induction_seats_state CHECK (state IN ('booked', 'present', 'absent', 'cancelled'))`);
  await knex.raw(`CREATE UNIQUE INDEX induction_seats_one_live ON induction_seats (session_id, person_id) WHERE state <> 'cancelled'`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
