import { type Kysely, sql } from 'kysely'

// Indexes that give the register list its order straight from an index (measured by npm run bench:register):
// by setpoint, by site and by the common site + class filter.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE INDEX limit_function_site_setpoint_idx ON limit_function (site_id, setpoint, id);
    CREATE INDEX limit_function_setpoint_idx ON limit_function (setpoint, id);
    CREATE INDEX limit_function_site_class_setpoint_idx ON limit_function (site_id, limit_class, setpoint, id);
    CREATE INDEX limit_function_site_class_tag_idx ON limit_function (site_id, limit_class, tag, id);
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP INDEX IF EXISTS limit_function_site_setpoint_idx, limit_function_setpoint_idx, limit_function_site_class_setpoint_idx, limit_function_site_class_tag_idx;
  `.execute(db)
}
