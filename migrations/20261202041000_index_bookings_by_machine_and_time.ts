import type { Knex } from 'knex';

/**
 * The calendar feed asks for every booking of a machine overlapping a week, history included: a GiST
 * index over (machine, occupied range) answers that without scanning past years of bookings.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw("CREATE INDEX bookings_machine_range ON bookings USING gist (machine_id, tstzrange(starts_at, occupied_until, '[)'))");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
