import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    ALTER TABLE people
      ADD COLUMN IF NOT EXISTS tier text NOT NULL DEFAULT 'community'
  `);
  await knex.raw(`
    DO $$ BEGIN
      IF NOT EXISTS (SELECT 1 FROM pg_constraint WHERE conname = 'people_tier') THEN
        ALTER TABLE people ADD CONSTRAINT people_tier CHECK (tier IN ('student', 'staff', 'community', 'commercial'));
      END IF;
    END $$
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
