// The invented demo plant: two sites of the fictional Fernhollow Process Company and one account per role.
// No real company, product or person is meant.
import type { Role } from '../../shared/schemas/users.ts'
import { DEFAULT_SITE_POLICY } from '../../shared/schemas/sites.ts'
import { systemClock } from '../clock.ts'
import type { Db } from '../db/index.ts'
import { appendAudit, sealAll } from '../features/audit/audit.repository.ts'
import { hashPassword } from '../features/session/passwords.ts'
import { seedDemoRegister } from './demo-register.ts'

export const DEMO_PASSWORD = 'limitkeeper-demo'

export const DEMO_SITES = [
  {
    code: 'FHR',
    name: 'Fernhollow Refinery',
    timeZone: 'Europe/Berlin',
    areas: ['Crude Unit', 'Hydrotreater', 'Tank Farm', 'Utilities'],
  },
  {
    code: 'SMP',
    name: 'Saltmarsh Polymers',
    timeZone: 'America/Chicago',
    areas: ['Reactor Train A', 'Extrusion', 'Thermal Oil System'],
  },
] as const

interface DemoAccount {
  email: string
  name: string
  label: string
  roles: { site: 'FHR' | 'SMP'; role: Role }[]
}
const both = (role: Role) => [
  { site: 'FHR' as const, role },
  { site: 'SMP' as const, role },
]

export const DEMO_ACCOUNTS: DemoAccount[] = [
  {
    email: 'admin@fernhollow.example',
    name: 'Ada Brightwater',
    label: 'Administrator, both sites',
    roles: both('admin'),
  },
  {
    email: 'engineer@fernhollow.example',
    name: 'Selma Rookwood',
    label: 'Safety engineer, both sites',
    roles: both('safety_engineer'),
  },
  {
    email: 'approver@fernhollow.example',
    name: 'Arlo Pennick',
    label: 'Approver, both sites',
    roles: both('approver'),
  },
  {
    email: 'approver2@fernhollow.example',
    name: 'Ines Harrowgate',
    label: 'Approver (second signature), both sites',
    roles: both('approver'),
  },
  {
    email: 'supervisor@fernhollow.example',
    name: 'Hedda Marlowe',
    label: 'Shift supervisor, Fernhollow Refinery',
    roles: [{ site: 'FHR', role: 'shift_supervisor' }],
  },
  {
    email: 'technician@fernhollow.example',
    name: 'Tomas Quillfeather',
    label: 'Maintenance technician, both sites',
    roles: both('technician'),
  },
  {
    email: 'operator@fernhollow.example',
    name: 'Olive Tanager',
    label: 'Operator, Fernhollow Refinery',
    roles: [{ site: 'FHR', role: 'operator' }],
  },
  {
    email: 'manager@fernhollow.example',
    name: 'Piet Vanderholm',
    label: 'Plant manager, both sites',
    roles: both('plant_manager'),
  },
  {
    email: 'auditor@fernhollow.example',
    name: 'Aurelia Stonebridge',
    label: 'Auditor, both sites',
    roles: both('auditor'),
  },
]

/**
 * Seeds the demo plant into an empty database; returns false (and does nothing) when any user exists. `register: false`
 * leaves out the demo register (about 150 limits, a few seconds), for tests that do not need it.
 */
export async function seedDemo(db: Db, clock = systemClock, opts: { register?: boolean } = {}): Promise<boolean> {
  if (process.env.NODE_ENV === 'production') throw new Error('Demo accounts are refused when NODE_ENV=production.')
  const any = await db.selectFrom('app_user').select('id').limit(1).executeTakeFirst()
  if (any) return false
  const hash = await hashPassword(DEMO_PASSWORD)
  await db.transaction().execute(async (trx) => {
    const now = clock.now()
    const siteIds: Record<string, number> = {}
    for (const s of DEMO_SITES) {
      const { id } = await trx
        .insertInto('site')
        .values({
          code: s.code,
          name: s.name,
          time_zone: s.timeZone,
          policy: JSON.stringify(DEFAULT_SITE_POLICY),
          created_at: now,
        })
        .returning('id')
        .executeTakeFirstOrThrow()
      siteIds[s.code] = id
      await trx
        .insertInto('area')
        .values(s.areas.map((name) => ({ site_id: id, name })))
        .execute()
    }
    for (const a of DEMO_ACCOUNTS) {
      const { id } = await trx
        .insertInto('app_user')
        .values({ email: a.email, display_name: a.name, password_hash: hash, created_at: now, updated_at: now })
        .returning('id')
        .executeTakeFirstOrThrow()
      await trx
        .insertInto('role_assignment')
        .values(a.roles.map((r) => ({ user_id: id, site_id: siteIds[r.site], role: r.role })))
        .execute()
    }
    await appendAudit(
      trx,
      clock,
      { actorId: null, requestId: null, ip: null },
      {
        action: 'seed.demo',
        entityType: 'System',
        after: { sites: DEMO_SITES.map((s) => s.code), accounts: DEMO_ACCOUNTS.length },
      },
    )
    if (opts.register !== false) await seedDemoRegister(trx, clock)
  })
  // the demo plant's trail is linked into the chain at once, as the sealer job would a second later
  await sealAll(db, clock)
  return true
}
