import type { Knex } from 'knex';

/**
 * Controllers: the box at a machine (badge reader + relay on the enable line). The device token is stored only as
 * its SHA-256 (it is shown once); revoked controllers keep their row for the audit trail. last_state is the state
 * last handed to the box, so a long-poll answers at once when the state moved between two polls.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('controllers', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('machine_id').notNullable().references('machines.id');
    t.text('name').notNullable();
    t.text('token_hash').notNullable().unique();
    t.text('firmware');
    t.text('last_state');
    t.timestamp('last_seen_at', { useTz: true });
    t.timestamp('offline_alerted_at', { useTz: true });
    t.timestamp('revoked_at', { useTz: true });
    t.uuid('created_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('token_rotated_at', { useTz: true });
    t.index(['machine_id']);
  });
  await knex.raw(`ALTER TABLE controllers ADD CONSTRAINT controllers_name CHECK (length(name) BETWEEN 1 AND 80)`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
