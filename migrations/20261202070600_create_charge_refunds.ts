import type { Knex } from 'knex';

/** Each refund of a charge: who, how much, why. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('charge_refunds', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('charge_id').notNullable().references('charges.id');
    t.integer('amount_minor').notNullable();
    t.text('reason').notNullable();
    t.uuid('actor_id').references('people.id');
    t.text('provider_refund_id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw('ALTER TABLE charge_refunds ADD CONSTRAINT charge_refunds_amount CHECK (amount_minor > 0)');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
