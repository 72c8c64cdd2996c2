import type { Knex } from 'knex';

/** A fault reported at a machine. Severity `note` / `degraded` / `stop`; a steward triages and resolves it. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('faults', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('machine_id').notNullable().references('machines.id');
    t.uuid('reported_by').notNullable().references('people.id');
    t.text('severity').notNullable();
    t.text('summary').notNullable();
    t.text('details').notNullable().defaultTo('');
    t.text('status').notNullable().defaultTo('open');
    t.uuid('session_id').references('machine_sessions.id');
    t.jsonb('photos').notNullable().defaultTo('[]');
    t.text('resolution');
    t.uuid('resolved_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('triaged_at', { useTz: true });
    t.timestamp('resolved_at', { useTz: true });
    t.index(['machine_id', 'created_at']);
    t.index(['status', 'created_at']);
  });
  await knex.raw(`
    ALTER TABLE faults
      ADD CONSTRAINT faults_severity CHECK (severity IN ('note', 'degraded', 'stop')),
      ADD CONSTRAINT faults_status CHECK (status IN ('open', 'triaged', 'resolved'));
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
