import type { Knex } from 'knex';

/**
 * When a person proved control of their e-mail address. Everyone already here (and the demo seed) counts as
 * confirmed; sign-up inserts NULL until the link in the confirmation e-mail is opened.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE people ADD COLUMN email_confirmed_at timestamptz DEFAULT now()');
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
