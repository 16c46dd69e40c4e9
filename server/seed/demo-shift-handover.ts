import type { Clock } from '../clock.ts'
import type { Db } from '../db/index.ts'
import { hashPassword } from '../features/session/passwords.ts'
import { DEMO_PASSWORD } from './demo.ts'

/** The other shift's supervisor at Fernhollow Refinery, so the demo plant's handover has someone to accept it. */
export const DEMO_SECOND_SUPERVISOR = {
  email: 'supervisor2@fernhollow.example',
  name: 'Joren Ashcombe',
  label: 'Shift supervisor (the other shift), Fernhollow Refinery',
}

export async function seedDemoShiftHandover(db: Db, clock: Clock): Promise<void> {
  const site = await db.selectFrom('site').select('id').where('code', '=', 'FHR').executeTakeFirst()
  if (!site) return
  const now = clock.now()
  const passwordHash = await hashPassword(DEMO_PASSWORD)
  await db.transaction().execute(async (trx) => {
    const { id } = await trx
      .insertInto('app_user')
      .values({
        email: DEMO_SECOND_SUPERVISOR.email,
        display_name: DEMO_SECOND_SUPERVISOR.name,
        password_hash: passwordHash,
        created_at: now,
        updated_at: now,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await trx
      .insertInto('role_assignment')
      .values({ user_id: id, site_id: site.id, role: 'shift_supervisor' })
      .execute()
  })
}
