import type { Knex } from 'knex';

/** Booking rules of each machine (one row per machine; a machine without a row uses the defaults). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('machine_booking_rules', (t) => {
    t.uuid('machine_id').primary().references('machines.id').onDelete('CASCADE');
    t.integer('slot_minutes').notNullable().defaultTo(15);
    t.integer('min_minutes').notNullable().defaultTo(30);
    t.integer('max_minutes').notNullable().defaultTo(180);
    t.integer('buffer_minutes').notNullable().defaultTo(10);
    t.integer('lead_minutes').notNullable().defaultTo(0);
    t.integer('horizon_days').notNullable().defaultTo(14);
    t.integer('cancel_cutoff_minutes').notNullable().defaultTo(120);
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw(`
    ALTER TABLE machine_booking_rules
      ADD CONSTRAINT mbr_slot CHECK (slot_minutes IN (5, 10, 15, 20, 30, 60)),
      ADD CONSTRAINT mbr_min_max CHECK (min_minutes > 0 AND max_minutes >= min_minutes AND max_minutes <= 1440),
      ADD CONSTRAINT mbr_grid CHECK (min_minutes % slot_minutes = 0 AND max_minutes % slot_minutes = 0),
      ADD CONSTRAINT mbr_buffer CHECK (buffer_minutes >= 0 AND buffer_minutes <= 240),
      ADD CONSTRAINT mbr_lead CHECK (lead_minutes >= 0 AND lead_minutes <= 10080),
      ADD CONSTRAINT mbr_horizon CHECK (horizon_days >= 1 AND horizon_days <= 365),
      ADD CONSTRAINT mbr_cutoff CHECK (cancel_cutoff_minutes >= 0 AND cancel_cutoff_minutes <= 10080)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
