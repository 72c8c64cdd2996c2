import type { Knex } from 'knex';

/**
 * What an admin sets for institution sign-in (the identity provider itself is configured by environment):
 * the name shown on the button, the claim whose values map to tiers, and whether people of the allowed
 * domains may still sign in with a password. One row.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('institution_sign_in', (t) => {
    t.integer('id').primary().defaultTo(1);
    t.text('institution_name');
    t.text('tier_claim');
    t.jsonb('tier_map').notNullable().defaultTo('{}');
    t.boolean('password_sign_in_off').notNullable().defaultTo(false);
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw('ALTER TABLE institution_sign_in ADD CONSTRAINT institution_sign_in_one_row CHECK (id = 1)');
  await knex('institution_sign_in').insert({ id: 1 });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
