import { type Kysely, sql } from 'kysely'

// The register's other sortable columns, each within a site, so a page sorted by any of them is read in index order
// instead of sorting every limit of the site (docs/architecture.md, "The register list query"; measured by
// npm run bench:register). The columns that can be empty are sorted with the empty values last in both directions,
// so they take one index per direction.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    CREATE INDEX limit_function_site_status_idx ON limit_function (site_id, status, id);
    CREATE INDEX limit_function_site_direction_idx ON limit_function (site_id, direction, id);
    CREATE INDEX limit_function_site_updated_idx ON limit_function (site_id, updated_at, id);
    CREATE INDEX limit_function_site_sil_idx ON limit_function (site_id, sil, id);
    CREATE INDEX limit_function_site_sil_desc_idx ON limit_function (site_id, sil DESC NULLS LAST, id DESC);
    CREATE INDEX limit_function_site_priority_idx ON limit_function (site_id, priority, id);
    CREATE INDEX limit_function_site_priority_desc_idx ON limit_function (site_id, priority DESC NULLS LAST, id DESC);
    CREATE INDEX limit_function_site_due_idx ON limit_function (site_id, test_due_date, id);
    CREATE INDEX limit_function_site_due_desc_idx ON limit_function (site_id, test_due_date DESC NULLS LAST, id DESC);
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    DROP INDEX IF EXISTS limit_function_site_status_idx, limit_function_site_direction_idx,
      limit_function_site_updated_idx, limit_function_site_sil_idx, limit_function_site_sil_desc_idx,
      limit_function_site_priority_idx, limit_function_site_priority_desc_idx, limit_function_site_due_idx,
      limit_function_site_due_desc_idx;
  `.execute(db)
}
