import type { Knex } from 'knex';

/** Per-machine overrides of a material rule: any column not null replaces the material's own. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('material_machine_overrides', (t) => {
    t.uuid('material_id').notNullable().references('materials.id').onDelete('CASCADE');
    t.uuid('machine_id').notNullable().references('machines.id').onDelete('CASCADE');
    t.text('rule');
    t.specificType('modes', 'text[]');
    t.decimal('max_cut_mm', 6, 2);
    t.text('note');
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.primary(['material_id', 'machine_id']);
  });
  await knex.raw(`
    ALTER TABLE material_machine_overrides
      ADD CONSTRAINT material_overrides_rule CHECK (rule IS NULL OR rule IN ('allowed','limited','blocked')),
      ADD CONSTRAINT material_overrides_modes CHECK (modes IS NULL OR modes <@ ARRAY['cut','engrave','score']::text[]),
      ADD CONSTRAINT material_overrides_max_cut CHECK (max_cut_mm IS NULL OR (max_cut_mm > 0 AND max_cut_mm <= 100)),
      ADD CONSTRAINT material_overrides_note CHECK (note IS NULL OR length(note) <= 500)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
