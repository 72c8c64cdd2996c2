import type { Knex } from 'knex';

/** The clearance funnel counts sign-offs per machine group in a period. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`CREATE INDEX signoffs_group_signed ON signoffs (group_id, signed_at) INCLUDE (person_id)`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
