import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('people', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.text('email').notNullable();
    t.text('name').notNullable();
    t.text('password_hash').notNullable();
    t.boolean('active').notNullable().defaultTo(true);
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('deactivated_at', { useTz: true });
  });
  await knex.raw('CREATE UNIQUE INDEX people_email_unique ON people (lower(email))');
  await knex.raw("ALTER TABLE people ADD CONSTRAINT people_email_shape CHECK (email ~ '^[^@\\s]+@[^@\\s]+$' AND length(email) <= 254)");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
