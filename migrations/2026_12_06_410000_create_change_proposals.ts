import { type Kysely, sql } from 'kysely'

// Change proposals (docs/change-requests.md#change-proposals): anyone at the site with a part in operations or
// maintenance raises what should change and why; a safety engineer takes it up into a change request or declines it.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`CREATE TABLE change_proposal (
    id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
    site_id integer NOT NULL REFERENCES site(id),
    limit_id integer REFERENCES limit_function(id),
    title text NOT NULL,
    reason text NOT NULL,
    status text NOT NULL DEFAULT 'open' CHECK (status IN ('open', 'taken_up', 'declined')),
    proposer_id integer NOT NULL REFERENCES app_user(id),
    created_at timestamptz(3) NOT NULL,
    decided_by integer REFERENCES app_user(id),
    decided_at timestamptz(3),
    decline_reason text,
    change_request_id integer REFERENCES change_request(id),
    CHECK ((status = 'open') = (decided_at IS NULL)),
    CHECK (status <> 'declined' OR decline_reason IS NOT NULL),
    CHECK (status <> 'taken_up' OR change_request_id IS NOT NULL)
  )`.execute(db)
  await sql`CREATE INDEX change_proposal_site_idx ON change_proposal (site_id, status, created_at DESC)`.execute(db)
  await sql`CREATE INDEX change_proposal_limit_idx ON change_proposal (limit_id) WHERE limit_id IS NOT NULL`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE change_proposal`.execute(db)
}
