import { type Kysely, sql } from 'kysely'

// The day each limit's test status next changes by the calendar alone, so the schedule job refreshes only the limits
// whose day has come instead of every active limit each hour (docs/domain/due-dates.md). Every active limit starts
// as due for a refresh: the first run of the job fills the column in.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE limit_function ADD COLUMN test_status_changes_on date;
    UPDATE limit_function SET test_status_changes_on = DATE '2000-01-01' WHERE status = 'active';
    CREATE INDEX limit_function_test_status_changes_idx ON limit_function (test_status_changes_on)
      WHERE status = 'active' AND test_status_changes_on IS NOT NULL;
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE limit_function DROP COLUMN IF EXISTS test_status_changes_on`.execute(db)
}
