import type { Knex } from 'knex';

/** The students of a class block: supervised by the instructor who booked it (they need no clearance of their own). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('class_block_students', (t) => {
    t.uuid('booking_id').notNullable().references('bookings.id').onDelete('CASCADE');
    t.uuid('person_id').notNullable().references('people.id');
    t.primary(['booking_id', 'person_id']);
    t.index(['person_id']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
