import type { Knex } from 'knex';

/** A refund waiting for the payment provider: the charge reads `refund pending` until the provider has done it. */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE charges DROP CONSTRAINT charges_state;
    ALTER TABLE charges ADD CONSTRAINT charges_state CHECK (state IN ('pending', 'queued', 'held', 'captured', 'released', 'payment failed',
      'refunded', 'recharged', 'carried', 'waived', 'settled', 'refund pending'));
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
