import type { Knex } from 'knex';

/** The materials a booking declared (checked against the material rules when the booking was made). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('booking_materials', (t) => {
    t.bigIncrements('id').primary();
    t.uuid('booking_id').notNullable().references('bookings.id').onDelete('CASCADE');
    t.uuid('material_id').notNullable().references('materials.id');
    t.text('mode').notNullable();
    t.decimal('thickness_mm', 6, 2).notNullable();
    t.index(['booking_id']);
  });
  await knex.raw(`
    ALTER TABLE booking_materials
      ADD CONSTRAINT booking_materials_mode CHECK (mode IN ('cut', 'engrave', 'score')),
      ADD CONSTRAINT booking_materials_thickness CHECK (thickness_mm > 0 AND thickness_mm <= 100);
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
