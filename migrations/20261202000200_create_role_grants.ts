import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('role_grants', (t) => {
    t.uuid('person_id').notNullable().references('people.id').onDelete('CASCADE');
    t.text('role').notNullable();
    t.uuid('granted_by').references('people.id');
    t.timestamp('granted_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.primary(['person_id', 'role']);
  });
  await knex.raw("ALTER TABLE role_grants ADD CONSTRAINT role_grants_role CHECK (role IN ('member', 'instructor', 'steward', 'admin'))");
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
