// The demo people as the services see them: each with their CASL ability and an audit context, so demo data is made
// through the product's own services with the rules every user meets.
import { createAppAbility, defineRulesFor } from '../../shared/abilities/index.ts'
import type { Db } from '../db/index.ts'
import { findRolesByUserIds } from '../features/users/users.repository.ts'

export type DemoActor = ReturnType<Awaited<ReturnType<typeof demoActors>>>

/** Returns `as(who)`: the demo account `<who>@fernhollow.example` with its ability and audit context. */
export async function demoActors(db: Db) {
  const users = await db.selectFrom('app_user').select(['id', 'email']).execute()
  const roles = await findRolesByUserIds(
    db,
    users.map((u) => u.id),
  )
  return (who: string) => {
    const u = users.find((x) => x.email === `${who}@fernhollow.example`)!
    const user = { id: u.id, roles: roles.get(u.id) ?? [] }
    return { ability: createAppAbility(defineRulesFor(user)), ctx: { actorId: u.id, requestId: 'demo-seed', ip: null } }
  }
}

/** The precautions of a demo trip test (docs/trip-tests.md#precautions): isolated, in a hazardous area, gas tested. */
export const demoPrecautions = (permitToWork: string) => ({
  isolated: true,
  permitToWork,
  controlRoomInformed: true,
  hazardousArea: true,
  intrinsicallySafeCalibrator: true,
  gasTestDone: true,
  realTripAcknowledged: false,
})
