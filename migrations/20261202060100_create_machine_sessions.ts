import type { Knex } from 'knex';

/**
 * A session at the machine: from check-in to check-out. Beam time (billable minutes) is measured from it;
 * the pre-use checklist and the check-out answers are kept with it.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('machine_sessions', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('booking_id').references('bookings.id');
    t.uuid('machine_id').notNullable().references('machines.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.timestamp('checked_in_at', { useTz: true }).notNullable();
    t.timestamp('checked_out_at', { useTz: true });
    t.integer('beam_minutes');
    t.integer('job_timer_minutes');
    t.jsonb('checklist').notNullable().defaultTo('{}');
    t.decimal('coolant_temp_c', 4, 1);
    t.jsonb('checkout').notNullable().defaultTo('{}');
    t.boolean('closed_by_system').notNullable().defaultTo(false);
    t.boolean('needs_steward').notNullable().defaultTo(false);
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['machine_id', 'checked_in_at']);
    t.index(['person_id', 'checked_in_at']);
  });
  await knex.raw(`
    ALTER TABLE machine_sessions
      ADD CONSTRAINT machine_sessions_order CHECK (checked_out_at IS NULL OR checked_out_at >= checked_in_at),
      ADD CONSTRAINT machine_sessions_beam CHECK (beam_minutes IS NULL OR beam_minutes >= 0);
    CREATE UNIQUE INDEX machine_sessions_one_open_per_machine ON machine_sessions (machine_id) WHERE checked_out_at IS NULL;
    CREATE UNIQUE INDEX machine_sessions_one_per_booking ON machine_sessions (booking_id) WHERE booking_id IS NOT NULL;
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
