import type { Knex } from 'knex';

/**
 * A fault report may carry the id its phone made for it (a report queued offline can be sent twice when the
 * connection comes and goes). The same client id is stored once: the second send gets the fault already filed.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE faults ADD COLUMN client_id uuid;
    CREATE UNIQUE INDEX faults_client_id_unique ON faults (client_id) WHERE client_id IS NOT NULL;
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
