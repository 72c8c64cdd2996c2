import type { Knex } from 'knex';

/**
 * The upkeep log: who did what to which machine, when, with notes. A tube replacement records the new
 * tube's type and rated life and restarts the tube-hour count.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('upkeep_entries', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('machine_id').notNullable().references('machines.id');
    t.text('kind').notNullable();
    t.uuid('performed_by').notNullable().references('people.id');
    t.timestamp('performed_at', { useTz: true }).notNullable();
    t.text('notes').notNullable().defaultTo('');
    t.text('tube_model');
    t.integer('tube_rated_hours');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['machine_id', 'kind', 'performed_at']);
  });
  await knex.raw(`
    ALTER TABLE upkeep_entries
      ADD CONSTRAINT upkeep_entries_kind CHECK (kind IN ('lens_clean','mirror_clean','alignment_check','coolant_change','extractor_filter','tube_replacement')),
      ADD CONSTRAINT upkeep_entries_notes CHECK (length(notes) <= 2000),
      ADD CONSTRAINT upkeep_entries_tube CHECK (kind = 'tube_replacement' OR (tube_model IS NULL AND tube_rated_hours IS NULL)),
      ADD CONSTRAINT upkeep_entries_rated CHECK (tube_rated_hours IS NULL OR tube_rated_hours BETWEEN 100 AND 100000)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
