import { type Kysely, sql } from 'kysely'

// The register sorted by priority within one class of limit. Only alarms carry a priority; a trip's is empty, so
// the empty values come last in both directions. With a class filter, (site_id, priority, id) made PostgreSQL step
// over every alarm of the site to reach the first trip (about 110 ms at 100,000 limits); these indexes give the
// order within the class directly (about 2 ms). docs/architecture.md, "The register list query"; measured by
// npm run bench:register.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE INDEX limit_function_site_class_priority_idx ON limit_function (site_id, limit_class, priority, id);
    CREATE INDEX limit_function_site_class_priority_desc_idx
      ON limit_function (site_id, limit_class, priority DESC NULLS LAST, id DESC);
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP INDEX IF EXISTS limit_function_site_class_priority_idx, limit_function_site_class_priority_desc_idx;
  `.execute(db)
}
