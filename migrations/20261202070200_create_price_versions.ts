import type { Knex } from 'knex';

/** A price version: in force from effective_from until the next version's effective_from. Never updated. */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('price_versions', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.timestamp('effective_from', { useTz: true }).notNullable().unique();
    t.text('currency').notNullable();
    t.integer('increment_minutes').notNullable();
    t.integer('minimum_charge_minor').notNullable();
    t.integer('daily_cap_minor');
    t.integer('late_cancel_fee_minor').notNullable();
    t.integer('no_show_fee_minor').notNullable();
    t.text('tax_mode').notNullable();
    t.integer('tax_rate_bp').notNullable();
    t.text('minimum_rule').notNullable().defaultTo('carry');
    t.specificType('recharge_tiers', 'text[]').notNullable().defaultTo(knex.raw("'{}'::text[]"));
    t.jsonb('materials').notNullable().defaultTo('[]');
    t.text('note').notNullable().defaultTo('');
    t.uuid('created_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
  });
  await knex.raw(`
    ALTER TABLE price_versions
      ADD CONSTRAINT price_versions_currency CHECK (currency ~ '^[A-Z]{3}$'),
      ADD CONSTRAINT price_versions_increment CHECK (increment_minutes BETWEEN 1 AND 240),
      ADD CONSTRAINT price_versions_money CHECK (minimum_charge_minor >= 0 AND (daily_cap_minor IS NULL OR daily_cap_minor >= 0)
        AND late_cancel_fee_minor >= 0 AND no_show_fee_minor >= 0),
      ADD CONSTRAINT price_versions_tax CHECK (tax_mode IN ('inclusive', 'exclusive') AND tax_rate_bp BETWEEN 0 AND 10000),
      ADD CONSTRAINT price_versions_minimum_rule CHECK (minimum_rule IN ('carry', 'waive'))
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
