import type { Knex } from 'knex';

/** The clearance level a machine asks for: basic, or advanced (e.g. a fitted rotary axis). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('machines', (t) => {
    t.text('required_level').notNullable().defaultTo('basic');
  });
  await knex.raw("ALTER TABLE machines ADD CONSTRAINT machines_required_level CHECK (required_level IN ('basic', 'advanced'))");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
