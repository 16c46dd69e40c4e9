import { type Kysely, sql } from 'kysely'

// Change notifications for the app's short-lived caches (docs/architecture.md, "Caches and change notifications"):
// every committed change to an account, its roles or a session, and every change to the register's tables, is
// announced on the channel `limitkeeper_change`, so each app instance drops what it cached.
// Payloads: 'user:<id>' (account or its roles), 'session:<sid>' (changed or ended session), 'register' (limits,
// instruments, processes, areas, sites).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE FUNCTION notify_user_change() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP <> 'INSERT' THEN
        PERFORM pg_notify('limitkeeper_change', 'user:' || (to_jsonb(OLD) ->> TG_ARGV[0]));
      END IF;
      IF TG_OP <> 'DELETE' THEN
        PERFORM pg_notify('limitkeeper_change', 'user:' || (to_jsonb(NEW) ->> TG_ARGV[0]));
      END IF;
      RETURN NULL;
    END $$;

    CREATE FUNCTION notify_session_change() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      PERFORM pg_notify('limitkeeper_change', 'session:' || OLD.sid);
      RETURN NULL;
    END $$;

    CREATE FUNCTION notify_register_change() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      PERFORM pg_notify('limitkeeper_change', 'register');
      RETURN NULL;
    END $$;

    CREATE TRIGGER app_user_change AFTER INSERT OR UPDATE OR DELETE ON app_user
      FOR EACH ROW EXECUTE FUNCTION notify_user_change('id');
    CREATE TRIGGER role_assignment_change AFTER INSERT OR UPDATE OR DELETE ON role_assignment
      FOR EACH ROW EXECUTE FUNCTION notify_user_change('user_id');
    CREATE TRIGGER session_change AFTER UPDATE OR DELETE ON session
      FOR EACH ROW EXECUTE FUNCTION notify_session_change();
    CREATE TRIGGER limit_function_change AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON limit_function
      FOR EACH STATEMENT EXECUTE FUNCTION notify_register_change();
    CREATE TRIGGER limit_instrument_change AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON limit_instrument
      FOR EACH STATEMENT EXECUTE FUNCTION notify_register_change();
    CREATE TRIGGER instrument_change AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON instrument
      FOR EACH STATEMENT EXECUTE FUNCTION notify_register_change();
    CREATE TRIGGER process_change AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON process
      FOR EACH STATEMENT EXECUTE FUNCTION notify_register_change();
    CREATE TRIGGER area_change AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON area
      FOR EACH STATEMENT EXECUTE FUNCTION notify_register_change();
    CREATE TRIGGER site_change AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON site
      FOR EACH STATEMENT EXECUTE FUNCTION notify_register_change();
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP TRIGGER IF EXISTS app_user_change ON app_user;
    DROP TRIGGER IF EXISTS role_assignment_change ON role_assignment;
    DROP TRIGGER IF EXISTS session_change ON session;
    DROP TRIGGER IF EXISTS limit_function_change ON limit_function;
    DROP TRIGGER IF EXISTS limit_instrument_change ON limit_instrument;
    DROP TRIGGER IF EXISTS instrument_change ON instrument;
    DROP TRIGGER IF EXISTS process_change ON process;
    DROP TRIGGER IF EXISTS area_change ON area;
    DROP TRIGGER IF EXISTS site_change ON site;
    DROP FUNCTION IF EXISTS notify_user_change(), notify_session_change(), notify_register_change();
  `.execute(db)
}
