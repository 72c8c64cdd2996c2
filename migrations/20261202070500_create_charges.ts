import type { Knex } from 'knex';

/**
 * What each person owes and what happened at the provider: our own record (the provider is never the
 * only copy). Amounts in minor units of `currency`; the price breakdown kept as JSON.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('charges', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('person_id').notNullable().references('people.id');
    t.uuid('machine_id').references('machines.id');
    t.uuid('booking_id');
    t.uuid('session_id');
    t.text('kind').notNullable();
    t.text('method').notNullable();
    t.text('cost_centre');
    t.text('state').notNullable();
    t.text('currency').notNullable();
    t.integer('amount_minor').notNullable();
    t.integer('tax_minor').notNullable().defaultTo(0);
    t.integer('card_amount_minor').notNullable().defaultTo(0);
    t.integer('held_minor').notNullable().defaultTo(0);
    t.integer('captured_minor').notNullable().defaultTo(0);
    t.integer('refunded_minor').notNullable().defaultTo(0);
    t.integer('minutes');
    t.timestamp('started_at', { useTz: true });
    t.uuid('price_version_id').references('price_versions.id');
    t.jsonb('breakdown').notNullable();
    t.text('provider_charge_id');
    t.text('pending_op');
    t.text('failure_code');
    t.text('failure_message');
    t.uuid('settled_by').references('charges.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw(`
    ALTER TABLE charges
      ADD CONSTRAINT charges_kind CHECK (kind IN ('beam_time', 'late_cancellation', 'no_show')),
      ADD CONSTRAINT charges_method CHECK (method IN ('card', 'recharge')),
      ADD CONSTRAINT charges_state CHECK (state IN ('pending', 'queued', 'held', 'captured', 'released', 'payment failed',
        'refunded', 'recharged', 'carried', 'waived', 'settled')),
      ADD CONSTRAINT charges_amounts CHECK (amount_minor >= 0 AND tax_minor >= 0 AND card_amount_minor >= 0 AND held_minor >= 0
        AND captured_minor >= 0 AND refunded_minor >= 0 AND refunded_minor <= greatest(captured_minor, amount_minor)),
      ADD CONSTRAINT charges_recharge_centre CHECK (method <> 'recharge' OR cost_centre IS NOT NULL)
  `);
  await knex.raw('CREATE INDEX charges_person ON charges (person_id, created_at DESC)');
  await knex.raw('CREATE INDEX charges_booking ON charges (booking_id) WHERE booking_id IS NOT NULL');
  await knex.raw('CREATE UNIQUE INDEX charges_provider ON charges (provider_charge_id) WHERE provider_charge_id IS NOT NULL');
  await knex.raw("CREATE UNIQUE INDEX charges_one_per_session ON charges (session_id) WHERE session_id IS NOT NULL");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
