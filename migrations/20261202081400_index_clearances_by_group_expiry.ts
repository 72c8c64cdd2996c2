import type { Knex } from 'knex';

/** The clearance funnel counts lapses per machine group by expiry. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`CREATE INDEX clearances_group_expiry ON clearances (group_id, expires_at) WHERE state IN ('cleared', 'lapsed')`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
