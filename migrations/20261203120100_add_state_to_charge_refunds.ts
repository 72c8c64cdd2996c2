import type { Knex } from 'knex';

/**
 * A refund is recorded when it is asked for (`pending`), then made at the provider by the worker (`done`), or given
 * up after every retry (`failed`, with the reason). Refunds already recorded were made at once: `done`.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE charge_refunds
      ADD COLUMN state text NOT NULL DEFAULT 'done',
      ADD COLUMN failure_message text,
      ADD COLUMN completed_at timestamptz,
      ADD CONSTRAINT charge_refunds_state CHECK (state IN ('pending', 'done', 'failed'));
    UPDATE charge_refunds SET completed_at = created_at;
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
