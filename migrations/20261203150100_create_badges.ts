import type { Knex } from 'knex';

/** Badges: a person's reader UIDs, kept as SHA-256 of the normalised UID plus its last four characters. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('badges', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('person_id').notNullable().references('people.id');
    t.text('badge_hash').notNullable().unique();
    t.text('last_four').notNullable();
    t.uuid('created_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['person_id']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
