import type { Knex } from 'knex';

/** Each machine belongs to one machine group (the clearance that lets a person run it). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('machines', (t) => {
    t.uuid('group_id').references('machine_groups.id').onDelete('RESTRICT');
    t.index(['group_id']);
  });
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
