import type { Knex } from 'knex';

/** Failed sign-in counters shared by every app process (the layout rate-limiter-flexible expects). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('sign_in_limits', (t) => {
    t.string('key', 255).primary();
    t.integer('points').notNullable().defaultTo(0);
    t.bigInteger('expire');
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
