import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('machines', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.text('code').notNullable().unique();
    t.text('name').notNullable();
    t.decimal('power_w', 8, 2).notNullable();
    t.text('tube_type').notNullable();
    t.decimal('wavelength_um', 5, 2).notNullable().defaultTo(10.6);
    t.integer('bed_width_mm').notNullable();
    t.integer('bed_depth_mm').notNullable();
    t.decimal('beam_diameter_mm', 6, 2).notNullable().defaultTo(6);
    t.decimal('divergence_mrad', 6, 3).notNullable().defaultTo(3);
    t.decimal('lens_focal_mm', 7, 2).notNullable().defaultTo(50.8);
    t.text('coolant_type').notNullable();
    t.text('status').notNullable().defaultTo('in service');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('retired_at', { useTz: true });
  });
  await knex.raw(`
    ALTER TABLE machines
      ADD CONSTRAINT machines_code_shape CHECK (code ~ '^[a-z0-9][a-z0-9-]{1,31}$'),
      ADD CONSTRAINT machines_tube_type CHECK (tube_type IN ('dc_glass', 'rf_metal')),
      ADD CONSTRAINT machines_wavelength CHECK (wavelength_um IN (10.6, 9.6)),
      ADD CONSTRAINT machines_power CHECK (power_w > 0 AND power_w <= 1000),
      ADD CONSTRAINT machines_bed CHECK (bed_width_mm > 0 AND bed_depth_mm > 0),
      ADD CONSTRAINT machines_optics CHECK (beam_diameter_mm > 0 AND divergence_mrad > 0 AND lens_focal_mm > 0),
      ADD CONSTRAINT machines_coolant CHECK (coolant_type IN ('water', 'air')),
      ADD CONSTRAINT machines_status CHECK (status IN ('in service', 'degraded', 'out of service'))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
