import type { Knex } from 'knex';

/**
 * Sessions started or measured by a controller: which controller, whether it was a walk-up, and the cumulative
 * beam-on seconds it reported (when present, billing uses them instead of the wall clock).
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('machine_sessions', (t) => {
    t.uuid('controller_id').references('controllers.id');
    t.boolean('walk_up').notNullable().defaultTo(false);
    t.integer('measured_beam_seconds');
  });
  await knex.raw(`ALTER TABLE machine_sessions ADD CONSTRAINT machine_sessions_measured CHECK (measured_beam_seconds IS NULL OR measured_beam_seconds >= 0)`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
