import type { Knex } from 'knex';

/** The no-show report counts personal bookings starting in a period, per person: a partial index by start covering person, machine, state and the late flag. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`CREATE INDEX bookings_personal_by_start ON bookings (starts_at) INCLUDE (person_id, machine_id, state, late_cancel) WHERE kind = 'personal'`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
