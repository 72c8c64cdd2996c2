import type { Knex } from 'knex';

/** Each comparison of our charges and refunds with the payment provider's for a period, and what differed. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    CREATE TABLE reconciliation_runs (
      id uuid PRIMARY KEY DEFAULT gen_random_uuid(),
      period_from timestamptz NOT NULL,
      period_to timestamptz NOT NULL,
      trigger text NOT NULL CHECK (trigger IN ('daily', 'command', 'admin')),
      ours_count integer NOT NULL,
      provider_count integer NOT NULL,
      mismatches jsonb NOT NULL,
      created_at timestamptz NOT NULL DEFAULT now(),
      CHECK (period_to > period_from)
    );
    CREATE INDEX reconciliation_runs_recent ON reconciliation_runs (created_at DESC);
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
