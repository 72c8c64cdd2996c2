import type { Knex } from 'knex';

/** The clearance funnel counts quiz attempts per machine group in a period. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`CREATE INDEX quiz_attempts_group_started ON quiz_attempts (group_id, started_at) INCLUDE (person_id, passed, submitted_at)`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
