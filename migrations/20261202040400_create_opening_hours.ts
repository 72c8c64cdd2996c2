import type { Knex } from 'knex';

/** Weekly opening hours of a machine, as wall-clock minutes in the site's time zone (ISO weekday 1 = Monday). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('opening_hours', (t) => {
    t.bigIncrements('id').primary();
    t.uuid('machine_id').notNullable().references('machines.id').onDelete('CASCADE');
    t.smallint('weekday').notNullable();
    t.smallint('opens_minute').notNullable();
    t.smallint('closes_minute').notNullable();
    t.index(['machine_id', 'weekday']);
  });
  await knex.raw(`
    ALTER TABLE opening_hours
      ADD CONSTRAINT opening_hours_weekday CHECK (weekday BETWEEN 1 AND 7),
      ADD CONSTRAINT opening_hours_span CHECK (opens_minute >= 0 AND closes_minute <= 1440 AND opens_minute < closes_minute)
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
