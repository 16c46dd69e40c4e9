// The demo people as the services see them: each with their CASL ability and an audit context, so demo data is made
// through the product's own services with the rules every user meets.
import type { z } from 'zod'
import { createAppAbility, defineRulesFor } from '../../shared/abilities/index.ts'
import { TripTestInputSchema, type TripTestPrecautions } from '../../shared/schemas/trip-tests.ts'
import type { Db } from '../db/index.ts'
import type { AppDeps } from '../deps.ts'
import { createTripTest, signTripTest } from '../features/trip-tests/trip-tests.service.ts'
import { findRolesByUserIds } from '../features/users/users.repository.ts'
import { DEMO_PASSWORD } from './demo.ts'

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
export const demoPrecautions = (permitToWork: string): TripTestPrecautions => ({
  isolated: true,
  permitToWork,
  controlRoomInformed: true,
  hazardousArea: true,
  intrinsicallySafeCalibrator: true,
  gasTestDone: true,
  realTripAcknowledged: false,
})

/**
 * A demo technician records a full trip test by signal injection under the demo plant's proving procedure (latch,
 * reset and final element checked) and signs it as performed. `test` gives the rest: the limit, where the signal was
 * injected, the devices and work order, when, the as-found value, the notes and the precautions.
 */
export async function recordProvingTest(
  deps: AppDeps,
  tech: DemoActor,
  test: Omit<z.input<typeof TripTestInputSchema>, 'kind' | 'method' | 'procedureRef'>,
) {
  const t = await createTripTest(
    deps,
    tech.ability,
    tech.ctx,
    TripTestInputSchema.parse({
      kind: 'full',
      method: 'injection',
      procedureRef: 'FHR-MP-017 limit proving',
      latchHeld: true,
      resetRefusedWhileActive: true,
      resetAcceptedAfterReturn: true,
      finalElementOk: true,
      ...test,
    }),
  )
  await signTripTest(deps, tech.ability, tech.ctx, t.id, 'performed', DEMO_PASSWORD, '')
  return t
}
