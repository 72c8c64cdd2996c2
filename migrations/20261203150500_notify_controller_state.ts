import type { Knex } from 'knex';

/**
 * NOTIFY controller_state whenever something a controller's state depends on changes, with the machine's id as the
 * payload ('*' when every machine may be affected: a clearance or a person's active flag). Delivered at commit, to
 * every app process that LISTENs, so a waiting long-poll answers within moments whichever process made the change.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    CREATE FUNCTION notify_controller_state_machine() RETURNS trigger LANGUAGE plpgsql AS \$\$
    BEGIN
      IF TG_TABLE_NAME = 'machines' THEN
        PERFORM pg_notify('controller_state', NEW.id::text);
      ELSE
        PERFORM pg_notify('controller_state', NEW.machine_id::text);
      END IF;
      RETURN NULL;
    END \$\$;
    CREATE FUNCTION notify_controller_state_all() RETURNS trigger LANGUAGE plpgsql AS \$\$
    BEGIN
      PERFORM pg_notify('controller_state', '*');
      RETURN NULL;
    END \$\$;
    CREATE TRIGGER machines_notify_controller AFTER UPDATE OF status ON machines
      FOR EACH ROW WHEN (OLD.status IS DISTINCT FROM NEW.status) EXECUTE FUNCTION notify_controller_state_machine();
    CREATE TRIGGER bookings_notify_controller AFTER INSERT OR UPDATE OF state, ends_at ON bookings
      FOR EACH ROW EXECUTE FUNCTION notify_controller_state_machine();
    CREATE TRIGGER machine_sessions_notify_controller AFTER INSERT OR UPDATE OF checked_out_at ON machine_sessions
      FOR EACH ROW EXECUTE FUNCTION notify_controller_state_machine();
    CREATE TRIGGER clearances_notify_controller AFTER UPDATE OF state, level, expires_at ON clearances
      FOR EACH ROW EXECUTE FUNCTION notify_controller_state_all();
    CREATE TRIGGER people_notify_controller AFTER UPDATE OF active ON people
      FOR EACH ROW WHEN (OLD.active IS DISTINCT FROM NEW.active) EXECUTE FUNCTION notify_controller_state_all();
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
