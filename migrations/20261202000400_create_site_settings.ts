import type { Knex } from 'knex';

/** One row: the site this installation serves. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('site_settings', (t) => {
    t.integer('id').primary().defaultTo(1);
    t.text('name').notNullable();
    t.text('time_zone').notNullable().defaultTo('UTC');
    t.string('currency', 3).notNullable().defaultTo('NZD');
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw('ALTER TABLE site_settings ADD CONSTRAINT site_settings_single_row CHECK (id = 1)');
  await knex.raw("ALTER TABLE site_settings ADD CONSTRAINT site_settings_currency CHECK (currency ~ '^[A-Z]{3}$')");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
