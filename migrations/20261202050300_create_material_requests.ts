import type { Knex } from 'knex';

/** New-material requests from members, with the supplier's safety data sheet stored in object storage. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('material_requests', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('requester_id').notNullable().references('people.id');
    t.text('name').notNullable();
    t.text('supplier').notNullable();
    t.text('composition').notNullable();
    t.decimal('thickness_mm', 6, 2).notNullable();
    t.text('mode').notNullable();
    t.text('sds_key').notNullable();
    t.text('sds_filename').notNullable();
    t.integer('sds_bytes').notNullable();
    t.text('screen_verdict').notNullable();
    t.text('screen_reason').notNullable();
    t.text('status').notNullable().defaultTo('pending');
    t.uuid('decided_by').references('people.id');
    t.timestamp('decided_at', { useTz: true });
    t.text('decision_reason');
    t.uuid('material_id').references('materials.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.index(['status', 'created_at']);
    t.index(['requester_id']);
  });
  await knex.raw(`
    ALTER TABLE material_requests
      ADD CONSTRAINT material_requests_mode CHECK (mode IN ('cut','engrave','score')),
      ADD CONSTRAINT material_requests_thickness CHECK (thickness_mm > 0 AND thickness_mm <= 100),
      ADD CONSTRAINT material_requests_verdict CHECK (screen_verdict IN ('blocked','review')),
      ADD CONSTRAINT material_requests_status CHECK (status IN ('pending','approved','refused')),
      ADD CONSTRAINT material_requests_sds_size CHECK (sds_bytes > 0 AND sds_bytes <= 10485760),
      ADD CONSTRAINT material_requests_decided CHECK ((status = 'pending') = (decided_at IS NULL)),
      ADD CONSTRAINT material_requests_approved_material CHECK (status <> 'approved' OR material_id IS NOT NULL)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
