import type { Knex } from 'knex';

/** How long an attempt stays open, set by the instructor per quiz version (default 30 minutes). */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`ALTER TABLE quiz_versions ADD COLUMN time_limit_minutes integer NOT NULL DEFAULT 30 CONSTRAINT quiz_versions_time_limit CHECK (time_limit_minutes BETWEEN 5 AND 240)`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
