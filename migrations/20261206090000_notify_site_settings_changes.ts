import type { Knex } from 'knex';

/**
 * Every write to site_settings (the admin form, a script, a restore, psql) sends NOTIFY site_settings in its own
 * transaction, so every app process that keeps the settings in memory drops its copy when that transaction commits.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    CREATE FUNCTION notify_site_settings_changed() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      PERFORM pg_notify('site_settings', 'changed');
      RETURN NULL;
    END $$`);
  await knex.raw(`
    CREATE TRIGGER site_settings_changed
    AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON site_settings
    FOR EACH STATEMENT EXECUTE FUNCTION notify_site_settings_changed()`);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
