import type { Knex } from 'knex';

/** People waiting for a range on a machine to free up; the first match is offered a 15-minute claim. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('waitlist_entries', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('machine_id').notNullable().references('machines.id');
    t.uuid('person_id').notNullable().references('people.id');
    t.timestamp('starts_at', { useTz: true }).notNullable();
    t.timestamp('ends_at', { useTz: true }).notNullable();
    t.text('state').notNullable().defaultTo('waiting');
    t.uuid('hold_booking_id').references('bookings.id');
    t.text('claim_token_hash');
    t.timestamp('offered_at', { useTz: true });
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['machine_id', 'state', 'created_at']);
  });
  await knex.raw(`
    ALTER TABLE waitlist_entries
      ADD CONSTRAINT waitlist_span CHECK (starts_at < ends_at),
      ADD CONSTRAINT waitlist_state CHECK (state IN ('waiting', 'offered', 'claimed', 'expired', 'withdrawn'))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
