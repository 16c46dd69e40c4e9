import { type Kysely, sql } from 'kysely'

// A role for control and SIS configuration engineers, who may implement approved changes.
export async function up(db: Kysely<any>): Promise<void> {
  await sql`ALTER TABLE role_assignment DROP CONSTRAINT role_assignment_role_check`.execute(db)
  await sql`ALTER TABLE role_assignment ADD CONSTRAINT role_assignment_role_check CHECK (role IN
    ('admin','safety_engineer','approver','shift_supervisor','technician','operator','plant_manager','auditor',
     'control_engineer'))`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DELETE FROM role_assignment WHERE role = 'control_engineer'`.execute(db)
  await sql`ALTER TABLE role_assignment DROP CONSTRAINT role_assignment_role_check`.execute(db)
  await sql`ALTER TABLE role_assignment ADD CONSTRAINT role_assignment_role_check CHECK (role IN
    ('admin','safety_engineer','approver','shift_supervisor','technician','operator','plant_manager','auditor'))`.execute(
    db,
  )
}
