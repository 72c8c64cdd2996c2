import type { Knex } from 'knex';

/**
 * The iCalendar SEQUENCE of a booking's event: 0 when confirmed, raised by one on every change sent to the
 * person's calendar (cancelled, bumped), so calendar apps take the newer message for the same UID.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE bookings ADD COLUMN calendar_sequence integer NOT NULL DEFAULT 0 CHECK (calendar_sequence >= 0)');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
