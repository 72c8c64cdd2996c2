import type { Knex } from 'knex';

/** People waiting for a seat on a full induction session, first come first served. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('induction_waitlist', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('session_id').notNullable().references('induction_sessions.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.text('state').notNullable().defaultTo('waiting');
    t.uuid('seat_id').references('induction_seats.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('offered_at', { useTz: true });
  });
  await knex.raw(`ALTER TABLE induction_waitlist ADD CONSTRAINT induction_waitlist_state CHECK (state IN ('waiting', 'seated', 'withdrawn'))`);
  await knex.raw(`CREATE UNIQUE INDEX induction_waitlist_one_waiting ON induction_waitlist (session_id, person_id) WHERE state = 'waiting'`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
