import type { Knex } from 'knex';

/** A person's customer at the payment provider and their saved card (brand and last four digits only). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('payment_customers', (t) => {
    t.uuid('person_id').primary().references('people.id');
    t.text('provider_customer_id').notNullable().unique();
    t.text('card_source_id');
    t.text('card_brand');
    t.text('card_last4');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
