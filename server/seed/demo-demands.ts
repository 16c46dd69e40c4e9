// A year of demands and trips in the demo Fernhollow Refinery, and one approved test deferral, made through the
// product's services as the demo people would (docs/demands.md, docs/trip-tests.md#test-deferrals). The heater outlet
// trip TSHH-101 trips spuriously more often than its hazard study assumed, so the observed-rate warning has something
// to show. Invented plant, invented people, invented events.
import type { AppDeps } from '../deps.ts'
import { classifyDemand, recordDemand, setDemandAssumptions } from '../features/demands/demands.service.ts'
import { decideDeferral, requestDeferral } from '../features/trip-tests/trip-tests.service.ts'
import { type DemoActor, demoPrecautions, recordProvingTest } from './demo-actors.ts'
import { DEMO_PASSWORD } from './demo.ts'

const DAY = 86_400_000

interface DemoEvent {
  daysAgo: number
  kind: 'real_demand' | 'spurious_trip' | 'dangerous_failure' | 'failure_on_demand'
  outcome?: 'acted' | 'failed_to_act'
  wholeFunction?: boolean
  /** index of the channel instrument concerned, if any */
  channel?: number
  description: string
  cause?: string
  evidence?: string
  by: 'operator' | 'supervisor'
  /** the engineer's classification; none: left to classify */
  classify?: { counts: boolean; dangerousUndetected?: boolean; note: string }
}

/** Seeds the demo demands, trips and a deferral; the database must hold the demo register and its tests. */
export async function seedDemoDemands(deps: AppDeps, as: (who: string) => DemoActor): Promise<void> {
  const { db, clock } = deps
  const eng = as('engineer')
  const tech = as('technician')
  const approver = as('approver')
  const now = clock.now().getTime()
  const iso = (daysAgo: number, hour = 0) => new Date(now - daysAgo * DAY + hour * 3_600_000).toISOString()

  const fhrLimits = await db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select(['limit_function.id', 'limit_function.tag', 'limit_function.sil'])
    .where('site.code', '=', 'FHR')
    .where('limit_function.status', '=', 'active')
    .where('limit_function.limit_class', '=', 'trip')
    .orderBy('limit_function.tag')
    .execute()
  const silTrips = fhrLimits.filter((l) => l.sil !== null)
  if (!silTrips.length) return
  const byTag = (tag: string) => silTrips.find((l) => l.tag === tag) ?? silTrips[0]
  const heater = byTag('TSHH-101')
  const others = silTrips.filter((l) => l.id !== heater.id)
  const second = others[0] ?? heater
  const third = others[1] ?? heater
  const fourth = others[2] ?? heater

  // the hazard study's rates and the commissioning dates of the SIL-rated trips
  for (const l of silTrips)
    await setDemandAssumptions(deps, eng.ability, eng.ctx, l.id, {
      assumedDemandRatePerYear: 0.1,
      assumedSpuriousRatePerYear: 0.2,
      commissionedAt: '2019-05-14',
      reason: 'LOPA FHR-2019 rev 3 and the SIS validation record of May 2019',
    })

  const channels = await db
    .selectFrom('limit_instrument')
    .select(['limit_id', 'instrument_id', 'position'])
    .where('limit_id', '=', heater.id)
    .orderBy('position')
    .execute()
  const channel = (i: number | undefined) => (i === undefined ? null : (channels[i]?.instrument_id ?? null))

  const plan: [{ id: number }, DemoEvent][] = [
    [
      heater,
      {
        daysAgo: 310,
        kind: 'spurious_trip',
        channel: 1,
        description: 'Heater tripped at steady firing; outlet temperature normal on the other two channels',
        cause: 'Compensating-cable terminal of TT-101B loose in the junction box; channel went upscale',
        evidence: 'Sequence-of-events log and the DCS trend of the three outlet temperatures',
        by: 'operator',
        classify: { counts: true, note: 'Genuine spurious trip; terminal re-made under WO-25-8812' },
      },
    ],
    [
      heater,
      {
        daysAgo: 204,
        kind: 'real_demand',
        outcome: 'acted',
        wholeFunction: true,
        description:
          'Loss of pass-2 flow drove the outlet to the trip; fuel gas and pilot gas valves closed, burners out',
        evidence: 'Sequence-of-events log; valve closing times read from the DCS trend',
        by: 'supervisor',
        classify: { counts: true, note: 'Genuine process demand; the whole function acted' },
      },
    ],
    [
      heater,
      {
        daysAgo: 171,
        kind: 'spurious_trip',
        channel: 0,
        description: 'Trip during a burner light-off sequence',
        cause: 'Flame impingement on the TT-101A thermowell after a burner tip change; two channels spiked',
        by: 'operator',
        classify: { counts: true, note: 'Genuine spurious trip; burner alignment corrected' },
      },
    ],
    [
      second,
      {
        daysAgo: 140,
        kind: 'real_demand',
        outcome: 'acted',
        wholeFunction: true,
        description: 'Process excursion reached the trip during a feed changeover; the shutdown valves closed',
        evidence: 'Shift log entry and the sequence-of-events log',
        by: 'supervisor',
        classify: { counts: true, note: 'Genuine demand during a feed changeover' },
      },
    ],
    [
      third,
      {
        daysAgo: 96,
        kind: 'dangerous_failure',
        description: 'Walk-round found the transmitter isolation valve closed: the trip could not see the process',
        cause: 'Valve left closed after a transmitter calibration; the permit did not list its reopening',
        evidence: 'Walk-round check sheet and a photograph of the valve',
        by: 'operator',
        classify: { counts: true, dangerousUndetected: true, note: 'Dangerous undetected; procedure change raised' },
      },
    ],
    [
      heater,
      {
        daysAgo: 58,
        kind: 'spurious_trip',
        channel: 2,
        description: 'Heater tripped with the outlet at normal temperature',
        cause: 'Water in the TT-101C head after heavy rain; the channel read high and voted with TT-101A at 384 °C',
        by: 'operator',
        classify: { counts: true, note: 'Genuine spurious trip; head gasket replaced' },
      },
    ],
    [
      fourth,
      {
        daysAgo: 40,
        kind: 'spurious_trip',
        description: 'Trip while a technician worked in the marshalling cabinet',
        cause: 'Wrong terminal lifted during unrelated work',
        by: 'supervisor',
        classify: { counts: false, note: 'Maintenance error during other work, not a trip of the function itself' },
      },
    ],
    [
      heater,
      {
        daysAgo: 21,
        kind: 'failure_on_demand',
        channel: 1,
        description: 'High outlet temperature: TT-101A and TT-101C tripped, TT-101B stayed below the trip',
        cause: 'TT-101B transmitter drifted low',
        evidence: 'Sequence-of-events log',
        by: 'supervisor',
        classify: {
          counts: true,
          dangerousUndetected: true,
          note: 'Channel failed dangerously; the 2oo3 vote still acted',
        },
      },
    ],
    [
      second,
      {
        daysAgo: 2,
        kind: 'real_demand',
        outcome: 'acted',
        wholeFunction: false,
        description: 'The trip acted on a process upset at night; final element movement not yet confirmed',
        by: 'operator',
      },
    ],
  ]

  for (const [limit, e] of plan) {
    const who = as(e.by)
    const d = await recordDemand(deps, who.ability, who.ctx, {
      limitId: limit.id,
      kind: e.kind,
      outcome: e.outcome ?? null,
      occurredAt: iso(e.daysAgo, 3),
      description: e.description,
      cause: e.cause ?? '',
      evidence: e.evidence ?? '',
      workOrder: `WO-26-${5000 + e.daysAgo}`,
      wholeFunction: e.wholeFunction ?? false,
      instrumentId: limit.id === heater.id ? channel(e.channel) : null,
    })
    if (e.classify)
      await classifyDemand(deps, eng.ability, eng.ctx, d.id, { dangerousUndetected: false, ...e.classify })
  }

  // fault exposure on risk erosion: a single-channel SIL-rated trip proven 200 days ago, found tripping late at its
  // test 30 days ago (a dangerous undetected failure) and proven again after the repair two days later
  const single = await db
    .selectFrom('limit_function')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .select([
      'limit_function.id',
      'limit_function.setpoint',
      'limit_function.direction',
      'instrument.range_low',
      'instrument.range_high',
      'instrument.signal',
    ])
    .where(
      'limit_function.id',
      'in',
      silTrips.map((l) => l.id).filter((id) => id !== heater.id && id !== second.id),
    )
    .where((eb) =>
      eb(
        eb
          .selectFrom('limit_instrument')
          .select(eb.fn.countAll<string>().as('n'))
          .whereRef('limit_instrument.limit_id', '=', 'limit_function.id'),
        '=',
        '1',
      ),
    )
    .orderBy('limit_function.tag')
    .execute()
  const exposed = single.find((l) => {
    const kind = l.signal.kind
    return kind === 'current' || kind === 'voltage'
  })
  if (exposed) {
    const span = Number(exposed.range_high) - Number(exposed.range_low)
    const sp = Number(exposed.setpoint)
    const late = Math.round((exposed.direction === 'high' ? sp + 0.03 * span : sp - 0.03 * span) * 100) / 100
    for (const [daysAgo, asFound, notes] of [
      [200, sp, 'Tripped at setpoint.'],
      [30, late, 'Tripped late: transmitter drifted; replaced under WO-26-5030.'],
      [28, sp, 'Retest after the transmitter was replaced: tripped at setpoint.'],
    ] as const) {
      await recordProvingTest(deps, tech, {
        limitId: exposed.id,
        injectionPoint: 'transmitter_output',
        deviceSerial: daysAgo === 28 ? 'SN-5120' : 'SN-4877',
        calibratorId: 'CAL-FHR-02',
        calibratorDueDate: new Date(now - (daysAgo - 100) * DAY).toISOString().slice(0, 10),
        workOrder: `WO-26-${5000 + daysAgo}`,
        performedAt: iso(daysAgo, 9),
        asFound,
        notes,
      })
    }
  }

  // a test deferral: a trip last proven 350 days ago, due in about two weeks, deferred to the planned shutdown
  const untested = await db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .select(['limit_function.id', 'limit_function.setpoint', 'instrument.signal'])
    .where('site.code', '=', 'FHR')
    .where('limit_function.status', '=', 'active')
    .where('limit_function.limit_class', '=', 'trip')
    .where('limit_function.sil', 'is', null)
    .where('limit_function.test_interval_months', '=', 12)
    .where('limit_function.last_full_pass', 'is', null)
    .where('limit_function.protection_state', '=', 'in_service')
    .orderBy('limit_function.tag')
    .execute()
  const target = untested.find((l) => l.signal.kind !== 'switch')
  if (!target) return
  const tc = target.signal.kind === 'thermocouple'
  await recordProvingTest(deps, tech, {
    limitId: target.id,
    injectionPoint: 'sensor',
    sourceMode: tc ? 'tc_simulate' : null,
    deviceSerial: 'SN-4310',
    calibratorId: 'CAL-FHR-02',
    calibratorDueDate: new Date(now - 200 * DAY).toISOString().slice(0, 10),
    workOrder: 'WO-25-7702',
    performedAt: iso(350, 9),
    asFound: Number(target.setpoint),
    notes: 'Tripped at setpoint; reset checked.',
    precautions: demoPrecautions('PTW-25-7702'),
  })
  const due = await db
    .selectFrom('limit_function')
    .select('test_due_date')
    .where('id', '=', target.id)
    .executeTakeFirstOrThrow()
  if (!due.test_due_date) return
  const newDue = new Date(Date.parse(`${due.test_due_date}T00:00:00Z`) + 28 * DAY).toISOString().slice(0, 10)
  const deferral = await requestDeferral(deps, tech.ability, tech.ctx, {
    limitId: target.id,
    newDueDate: newDue,
    reason: 'The exchanger can only be isolated at the planned shutdown four weeks after the due date',
    compensatingMeasures: [
      'Operator compares the local gauge with the transmitter on every round',
      'High alarm lowered by 5 % under the temporary change of the shutdown plan',
    ],
  })
  await decideDeferral(deps, approver.ability, approver.ctx, deferral.id, 'approve', {
    password: DEMO_PASSWORD,
    comment: 'Accepted with the measures; test first thing at the shutdown',
  })
}
