import type { Knex } from 'knex';

/**
 * Every write to machine_booking_rules, opening_hours, machine_tier_quotas or closures (the admin screens, a script,
 * a restore, psql, a cascade from a deleted machine) gives booking_rules_stamp a new stamp in the same transaction.
 * The triggers are deferred to the commit, so the stamp row is locked only for the last moment of a transaction
 * (writers of the rules never wait on each other's stamp while holding other locks), and it is changed once per
 * transaction however many rows it wrote. TRUNCATE, which a deferred trigger cannot watch, has a plain statement
 * trigger of its own.
 */
const TABLES = ['machine_booking_rules', 'opening_hours', 'machine_tier_quotas', 'closures'];

export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    CREATE FUNCTION restamp_booking_rules() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      -- once per transaction, however many rows it wrote (a transaction-local marker)
      IF current_setting('beamwarden.rules_restamped', true) IS DISTINCT FROM 'yes' THEN
        UPDATE booking_rules_stamp SET stamp = gen_random_uuid() WHERE id = 1;
        PERFORM set_config('beamwarden.rules_restamped', 'yes', true);
      END IF;
      RETURN NULL;
    END $$`);
  for (const table of TABLES) {
    await knex.raw(`
      CREATE CONSTRAINT TRIGGER ${table}_restamp AFTER INSERT OR UPDATE OR DELETE ON ${table}
      DEFERRABLE INITIALLY DEFERRED FOR EACH ROW EXECUTE FUNCTION restamp_booking_rules()`);
    await knex.raw(`CREATE TRIGGER ${table}_restamp_truncate AFTER TRUNCATE ON ${table} FOR EACH STATEMENT EXECUTE FUNCTION restamp_booking_rules()`);
  }
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
