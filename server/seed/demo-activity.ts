// Demo activity on top of the demo register, made through the product's own services as the demo people would:
// trip tests done over the past year, one failed test (a degraded limit with signed measures), an active bypass,
// change requests waiting for approval and for implementation, change proposals, a year of demands and trips with a test deferral
// (demo-demands.ts), and the alarm journal. Invented plant, invented people.
import type { Clock } from '../clock.ts'
import type { Config } from '../config.ts'
import type { Db } from '../db/index.ts'
import type { AppDeps } from '../deps.ts'
import { logger } from '../logger.ts'
import { activateBypass, authorizeBypass, requestBypass } from '../features/bypasses/bypasses.service.ts'
import {
  approveChangeRequest,
  createChangeRequest,
  submitChangeRequest,
} from '../features/change-requests/change-requests.service.ts'
import { createProposal, declineProposal } from '../features/change-proposals/change-proposals.service.ts'
import { signDegradationMeasures, signTripTest } from '../features/trip-tests/trip-tests.service.ts'
import { demoActors, demoPrecautions, recordProvingTest } from './demo-actors.ts'
import { seedDemoAlarms } from './demo-alarms.ts'
import { seedDemoFormerTests, seedDemoHistory } from './demo-history.ts'
import { seedDemoDemands } from './demo-demands.ts'
import { DEMO_PASSWORD } from './demo.ts'

const DAY = 86_400_000

/** Seeds the demo activity; the database must hold the demo plant and its register. */
export async function seedDemoActivity(db: Db, config: Config, clock: Clock): Promise<void> {
  const deps: AppDeps = { db, pool: undefined as never, clock, config }
  const as = await demoActors(db)
  const tech = as('technician')
  const sup = as('supervisor')
  const eng = as('engineer')
  const approver = as('approver')
  const op = as('operator')
  const fhr = await db.selectFrom('site').select('id').where('code', '=', 'FHR').executeTakeFirstOrThrow()
  const active = await db
    .selectFrom('limit_function')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.setpoint',
      'limit_function.limit_class',
      'limit_function.sil',
      'limit_function.bypass_permitted',
      'limit_function.max_bypass_hours',
      'limit_function.test_interval_months',
      'instrument.signal',
      'instrument.range_low',
      'instrument.range_high',
    ])
    .where('limit_function.site_id', '=', fhr.id)
    .where('limit_function.status', '=', 'active')
    .orderBy('limit_function.tag')
    .execute()
  const now = clock.now().getTime()
  const calibratorDue = new Date(now + 120 * DAY).toISOString().slice(0, 10)

  // passing full tests on non-SIL trips and alarms, spread over the past months
  const plain = active.filter((l) => l.sil === null && l.signal.kind !== 'switch')
  for (const [i, l] of plain.slice(0, 12).entries()) {
    const performedAt = new Date(now - (20 + i * 25) * DAY).toISOString()
    const setpoint = Number(l.setpoint)
    const t = await recordProvingTest(deps, tech, {
      limitId: l.id,
      injectionPoint: 'sensor',
      sourceMode: l.signal.kind === 'thermocouple' ? 'tc_simulate' : null,
      deviceSerial: `SN-${4100 + i}`,
      calibratorId: 'CAL-FHR-03',
      calibratorDueDate: calibratorDue,
      workOrder: `WO-26-${3300 + i}`,
      performedAt,
      asFound: setpoint,
      notes: 'Tripped at setpoint; reset checked.',
      precautions: demoPrecautions(`PTW-26-${5100 + i}`),
    })
    if (i % 2 === 0) {
      await signTripTest(deps, tech.ability, tech.ctx, t.id, 'returned_to_service', DEMO_PASSWORD, '')
      await signTripTest(deps, sup.ability, sup.ctx, t.id, 'accepted', DEMO_PASSWORD, 'Equipment back in service')
    }
  }

  // one failed test: tripped late → degraded, with measures signed by the shift supervisor
  const failing = plain.find((l) => l.limit_class === 'trip' && !plain.slice(0, 12).includes(l)) ?? plain[12]
  if (failing) {
    const span = Number(failing.range_high) - Number(failing.range_low)
    const late = Number(failing.setpoint) + 0.03 * span * 1
    await recordProvingTest(deps, tech, {
      limitId: failing.id,
      injectionPoint: 'transmitter_output',
      deviceSerial: 'SN-4199',
      calibratorId: 'CAL-FHR-03',
      calibratorDueDate: calibratorDue,
      workOrder: 'WO-26-3399',
      performedAt: new Date(now - 3 * DAY).toISOString(),
      asFound: Math.round(late * 100) / 100,
      notes: 'Tripped late; transmitter drift suspected. Replacement ordered.',
      precautions: demoPrecautions('PTW-26-5199'),
    })
    await signDegradationMeasures(deps, sup.ability, sup.ctx, failing.id, {
      compensatingMeasures: ['Operator checks the local gauge every 30 minutes', 'Feed rate limited to 80 %'],
      repairDeadline: new Date(now + 7 * DAY).toISOString().slice(0, 10),
      password: DEMO_PASSWORD,
    })
  }

  // an active bypass with its predefined measures, authorized by the shift supervisor
  const bypassable = active.find(
    (l) =>
      l.limit_class === 'trip' &&
      l.bypass_permitted &&
      l.id !== failing?.id &&
      (l.max_bypass_hours === null || Number(l.max_bypass_hours) >= 6),
  )
  if (bypassable) {
    const b = await requestBypass(deps, op.ability, op.ctx, {
      limitId: bypassable.id,
      reason: 'Transmitter swap during planned maintenance',
      plannedStart: new Date(now - 60_000).toISOString(),
      plannedEnd: new Date(now + 5 * 3_600_000).toISOString(),
      predefinedMeasuresConfirmed: true,
      extraMeasures: [],
      channelInstrumentId: null,
      changeRequestId: null,
    })
    await authorizeBypass(deps, sup.ability, sup.ctx, b.id, {
      password: DEMO_PASSWORD,
      comment: 'Measures in place, checked on the round',
    })
    await activateBypass(deps, op.ability, op.ctx, b.id, { measuresInPlace: true, shownToOperator: true })
  }

  // change requests: one waiting for approval, one approved and waiting for the technician
  const candidates = active.filter(
    (l) => l.sil === null && l.limit_class === 'alarm' && l.id !== failing?.id && l.id !== bypassable?.id,
  )
  const span = (l: (typeof active)[number]) => Number(l.range_high) - Number(l.range_low)
  for (const [i, l] of candidates.slice(0, 2).entries()) {
    const step = Math.round(span(l) * 0.005 * 100) / 100
    try {
      const id = await createChangeRequest(deps, eng.ability, eng.ctx, {
        siteId: fhr.id,
        type: 'permanent',
        title: `Alarm ${l.tag}: setpoint ${i === 0 ? 'raised' : 'lowered'} after alarm rationalization`,
        rationale:
          'Alarm rationalization workshop 2026-11: the alarm came in during normal swings without operator action needed.',
        hazardReference: 'HAZOP FHR-2024 node 7',
        expiresAt: null,
        items: [
          { kind: 'modify', limitId: l.id, changes: { setpoint: Number(l.setpoint) + (i === 0 ? step : -step) } },
        ],
      })
      await submitChangeRequest(deps, eng.ability, eng.ctx, id)
      if (i === 1)
        await approveChangeRequest(deps, approver.ability, approver.ctx, id, {
          password: DEMO_PASSWORD,
          comment: 'Agreed with the rationalization record',
        })
    } catch (err) {
      // a demo change that does not fit its window is simply not seeded
      logger.warn({ component: 'seed', tag: l.tag, err }, 'demo change skipped')
    }
  }

  // change proposals from the floor: two open, one declined with its reason (docs/change-requests.md#change-proposals)
  const [first, second] = candidates.slice(2)
  if (first) {
    await createProposal(deps, op.ability, op.ctx, {
      siteId: fhr.id,
      limitId: first.id,
      title: `Alarm ${first.tag} comes in at every feed switch`,
      reason:
        'The alarm sounds for a minute or two at each feed tank switch and clears on its own; nobody acts on it. ' +
        'Could it get an on-delay or a wider deadband?',
    })
  }
  if (second) {
    const p = await createProposal(deps, tech.ability, tech.ctx, {
      siteId: fhr.id,
      limitId: second.id,
      title: `Move ${second.tag} to the spare transmitter`,
      reason: 'The present transmitter drifts between calibrations; the spare on the same nozzle is steadier.',
    })
    await declineProposal(
      deps,
      eng.ability,
      eng.ctx,
      p.id,
      'The transmitter is being replaced like for like in the next turnaround; the limit itself does not change.',
    )
  }
  await createProposal(deps, sup.ability, sup.ctx, {
    siteId: fhr.id,
    limitId: null,
    title: 'Shelving of fired-heater alarms during burner light-off',
    reason: 'During light-off the crew shelves the same alarms every time by hand; a documented rule would be safer.',
  })

  await seedDemoDemands(deps, as)
  // history from the former system on plain limits the activity above leaves untested and uncommissioned
  const untouched = await db
    .selectFrom('limit_function')
    .select(['id', 'tag'])
    .where(
      'id',
      'in',
      plain
        .slice(14)
        .map((l) => l.id)
        .concat(-1),
    )
    .where('test_status', '=', 'never_tested')
    .where('commissioned_at', 'is', null)
    .where('protection_state', '=', 'in_service')
    .orderBy('tag')
    .limit(3)
    .execute()
  const sites = await db.selectFrom('site').select(['id', 'code', 'time_zone']).orderBy('code').execute()
  const zoneOf = (id: number) => sites.find((s) => s.id === id)!.time_zone
  await seedDemoHistory(deps, eng, { id: fhr.id, timeZone: zoneOf(fhr.id) }, untouched)
  await seedDemoAlarms(db, clock)
  // last, so that every scenario above has picked its limits: the former system's last tests of the rest
  for (const site of sites)
    await seedDemoFormerTests(deps, eng, { id: site.id, timeZone: site.time_zone }, formerTester(site.code))
}

/** The invented tester of a site's former system. */
const formerTester = (siteCode: string) => (siteCode === 'SMP' ? 'Loretta Quarrington' : 'Wendell Haverly')
