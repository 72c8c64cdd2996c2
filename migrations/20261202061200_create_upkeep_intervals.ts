import type { Knex } from 'knex';

/**
 * Per-machine upkeep intervals chosen by an admin, in beam hours and/or days. A kind without a row uses the
 * common-practice default in src/lib/upkeep-forecast.ts.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('upkeep_intervals', (t) => {
    t.uuid('machine_id').notNullable().references('machines.id');
    t.text('kind').notNullable();
    t.decimal('beam_hours', 8, 1);
    t.integer('days');
    t.uuid('updated_by').references('people.id');
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.primary(['machine_id', 'kind']);
  });
  await knex.raw(`
    ALTER TABLE upkeep_intervals
      ADD CONSTRAINT upkeep_intervals_kind CHECK (kind IN ('lens_clean','mirror_clean','alignment_check','coolant_change','extractor_filter','tube_replacement')),
      ADD CONSTRAINT upkeep_intervals_values CHECK ((beam_hours IS NULL OR beam_hours > 0) AND (days IS NULL OR days BETWEEN 1 AND 3650))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
