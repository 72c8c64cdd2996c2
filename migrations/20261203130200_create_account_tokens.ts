import type { Knex } from 'knex';

/**
 * Single-use links sent by e-mail: password reset, address confirmation, invitation. Only the SHA-256 of the
 * token is stored, so a copy of the database does not hold usable links.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('account_tokens', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('person_id').notNullable().references('people.id').onDelete('CASCADE');
    t.text('purpose').notNullable();
    t.text('token_hash').notNullable().unique();
    t.timestamp('expires_at', { useTz: true }).notNullable();
    t.timestamp('used_at', { useTz: true });
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['person_id', 'purpose']);
  });
  await knex.raw("ALTER TABLE account_tokens ADD CONSTRAINT account_tokens_purpose CHECK (purpose IN ('reset', 'confirm', 'invite'))");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
