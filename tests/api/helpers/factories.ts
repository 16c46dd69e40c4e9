import type { Db } from '../../../server/db/index.ts'
import type { Database } from '../../../server/db/schema.ts'
import { DEMO_PASSWORD } from '../../../server/seed/demo.ts'
import type { Express } from 'express'
import { ApiAgent, siteIdByCode } from './agent.ts'
import { IMPACT_CHECKLIST } from '../../../shared/schemas/change-requests.ts'

let seq = 0
const next = () => `${process.pid % 1000}-${++seq}`

/** How many rows a table holds. */
export async function countRows(db: Db, table: keyof Database): Promise<number> {
  const r = await db
    .selectFrom(table)
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()
  return Number(r.n)
}

/** How many audit events there are besides sign-in and sign-out (signing in is not the action a test checks). */
export async function countActionEvents(db: Db): Promise<number> {
  const r = await db
    .selectFrom('audit_event')
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .where('action', 'not like', 'session.%')
    .executeTakeFirstOrThrow()
  return Number(r.n)
}

/**
 * How many rows each of `tables` holds, under the test's name for it, and the audit actions as `audit`
 * (countActionEvents): what a refused request must leave as it was.
 */
export async function rowsAndAudit<K extends string>(db: Db, tables: Record<K, keyof Database>) {
  const out = {} as Record<K | 'audit', number>
  for (const [name, table] of Object.entries(tables) as [K, keyof Database][]) out[name] = await countRows(db, table)
  out.audit = await countActionEvents(db)
  return out
}

/** The audit actions besides sign-in and sign-out, oldest first (signing in is not the action a test checks). */
export async function actionEvents(db: Db): Promise<string[]> {
  const rows = await db
    .selectFrom('audit_event')
    .select('action')
    .where('action', 'not like', 'session.%')
    .orderBy('id')
    .execute()
  return rows.map((r) => r.action)
}

/** The audit actions on the records of one kind (`Bypass`, `ChangeRequest`…), or on those of `ids` only, oldest first. */
export async function auditActions(db: Db, entityType: string, ...ids: number[]): Promise<string[]> {
  let query = db.selectFrom('audit_event').select('action').where('entity_type', '=', entityType)
  if (ids.length) query = query.where('entity_id', 'in', ids.map(String))
  return (await query.orderBy('id').execute()).map((r) => r.action)
}

/**
 * The body of a type K thermocouple into a limit controller: range 0–1000 °C, normal 300–650 °C, no design limits,
 * upscale burnout; `over` changes any field.
 */
export function thermocoupleK(processId: number, tag: string, over: Record<string, unknown> = {}) {
  return {
    processId,
    tag,
    measuredVariable: 'temperature',
    unit: '°C',
    rangeLow: 0,
    rangeHigh: 1000,
    normalLow: 300,
    normalHigh: 650,
    burnout: 'upscale',
    signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
    deviceKind: 'limit_controller',
    ...over,
  }
}

/** The body of a type K thermocouple on a fired heater: range 0–1200 °C, normal 300–650 °C, design 900 °C, upscale burnout. */
export function heaterThermocouple(processId: number, tag: string) {
  return thermocoupleK(processId, tag, { rangeHigh: 1200, designLow: null, designHigh: 900 })
}

/**
 * The subsystems of a SIL-rated heater trip: a 1oo1 thermocouple, a 1oo1 logic solver and two shut-off valves voting
 * 1oo2, tested yearly (illustrative failure rates of the fictional plant).
 */
export const HEATER_SUBSYSTEMS = [
  {
    role: 'sensor',
    architecture: '1oo1',
    lambdaDu: 5e-7,
    beta: 0.05,
    mttrHours: 8,
    testIntervalMonths: 12,
    testCoverage: 0.9,
    missionTimeYears: 15,
  },
  {
    role: 'logic',
    architecture: '1oo1',
    lambdaDu: 1e-8,
    beta: 0.02,
    mttrHours: 8,
    testIntervalMonths: 12,
    testCoverage: 1,
    missionTimeYears: 15,
  },
  {
    role: 'final_element',
    architecture: '1oo2',
    lambdaDu: 2e-6,
    beta: 0.1,
    mttrHours: 24,
    testIntervalMonths: 12,
    testCoverage: 0.7,
    missionTimeYears: 15,
  },
]

/** A fired-heater process in an area of the site (its first unless `areaIndex`) numbered `n`, via the API as an engineer. */
async function heaterProcess(eng: ApiAgent, siteId: number, areaIndex = 0) {
  const area = ((await eng.get(`/api/areas?siteId=${siteId}`).expect(200)).body.items as { id: number }[])[areaIndex]
  const n = next()
  const proc = await eng.created('/api/processes', {
    areaId: area.id,
    name: `Fixture heater H-${n}`,
    description: 'fired heater',
  })
  return { area, proc, n }
}

/**
 * A fired-heater process at the refinery (FHR) with `channels` heater thermocouples tagged `TT-<n>A`, `TT-<n>B`, …
 * (the voted sensors of one limit), via the API as an engineer; `n` numbers the fixture for the tag of its limit.
 */
export async function heaterWithChannels(eng: ApiAgent, channels: number, areaIndex = 0) {
  const { proc, n } = await heaterProcess(eng, await siteIdByCode(eng, 'FHR'), areaIndex)
  const instruments: { id: number; tag: string }[] = []
  for (let i = 0; i < channels; i++) {
    const tag = `TT-${n}${String.fromCharCode(65 + i)}`
    instruments.push(await eng.created('/api/instruments', heaterThermocouple(proc.id, tag)))
  }
  return { proc, instruments, n }
}

/** A process, a type K thermocouple instrument (0–1200 °C, normal 300–650) and a proposed high trip at 780 °C, via the API as an engineer. */
export async function buildHeaterTrip(
  eng: ApiAgent,
  opts: { siteCode?: string; sil?: 1 | 2 | 3 | null; setpoint?: number; model?: string } = {},
) {
  const sites = (await eng.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
  const site = sites.find((s) => s.code === (opts.siteCode ?? 'FHR'))!
  const { area, proc, n } = await heaterProcess(eng, site.id)
  const inst = await eng.created('/api/instruments', {
    ...heaterThermocouple(proc.id, `TT-${n}`),
    ...(opts.model === undefined ? {} : { model: opts.model }),
  })
  const sil = opts.sil ?? null
  const subsystems = sil ? HEATER_SUBSYSTEMS : []
  const limit = await eng.created('/api/limits', {
    ...heaterTrip(proc.id, [inst.id], `TSHH-${n}`, sil, subsystems),
    setpoint: opts.setpoint ?? 780,
  })
  return { site, area, proc, inst, limit }
}

/**
 * The body of a fired heater's high-temperature trip on the instruments: 780 °C, deadband 5 °C, severe, latching,
 * reset by the operator, tested yearly; `over` adds or changes fields (SIL, bypass policy, …).
 */
export function heaterTripBody(
  processId: number,
  instrumentIds: number[],
  tag: string,
  over: Record<string, unknown> = {},
) {
  return {
    processId,
    instrumentIds,
    tag,
    direction: 'high',
    limitClass: 'trip',
    setpoint: 780,
    deadband: 5,
    severity: 'severe',
    testIntervalMonths: 12,
    latching: true,
    resetRole: 'operator',
    ...over,
  }
}

/**
 * The body of a fired heater's high-temperature alarm on the instruments: 700 °C, deadband 5 °C, moderate, 15 min for
 * the operator to respond, not latching; `over` adds or changes fields.
 */
export function heaterAlarmBody(
  processId: number,
  instrumentIds: number[],
  tag: string,
  over: Record<string, unknown> = {},
) {
  return heaterTripBody(processId, instrumentIds, tag, {
    limitClass: 'alarm',
    setpoint: 700,
    severity: 'moderate',
    latching: false,
    resetRole: null,
    responseTimeMin: 15,
    ...over,
  })
}

/**
 * The body of a fired heater's high-temperature trip on the instruments (heaterTripBody: 780 °C, latching, reset by
 * the operator; bypass up to 8 h with a compensating measure), with the given SIL and subsystems.
 */
export function heaterTrip(
  processId: number,
  instrumentIds: number[],
  tag: string,
  sil: number | null,
  subsystems: unknown[],
) {
  return heaterTripBody(processId, instrumentIds, tag, {
    sil,
    subsystems,
    compensatingMeasures: ['Operator watches TI locally every 15 min'],
    maxBypassHours: 8,
    bypassPermitted: true,
  })
}

/** A full trip test by injection at the sensor: the thermocouple input driven by a calibrator from `source`. */
function injectionTest(limitId: number, source: Record<string, unknown>, over: Record<string, unknown>) {
  return { limitId, kind: 'full', method: 'injection', injectionPoint: 'sensor', ...source, ...over }
}

/**
 * The body of a full trip test by a mV source at the sensor with the cold junction at 25 °C, calibrator CAL-07 due at
 * the end of 2026; `over` gives the moment and the result (and anything else the test varies).
 */
export function mvSourceTest(limitId: number, over: Record<string, unknown> = {}) {
  const source = { sourceMode: 'mv_source', coldJunctionC: 25, calibratorId: 'CAL-07', calibratorDueDate: '2026-12-31' }
  return injectionTest(limitId, source, over)
}

/**
 * The body of a full trip test by a thermocouple simulator at the sensor (it compensates the cold junction itself),
 * calibrator CAL-5 due at the end of 2027; `over` gives the moment and the result.
 */
export function simulatorTest(limitId: number, over: Record<string, unknown> = {}) {
  return injectionTest(
    limitId,
    { sourceMode: 'tc_simulate', calibratorId: 'CAL-5', calibratorDueDate: '2027-12-31' },
    over,
  )
}

/**
 * A passing full test of a heater trip (buildHeaterTrip: 780 °C, tolerance ±6 °C = 0.5 % of the 0–1200 °C span,
 * docs/trip-tests.md#judging-a-test): as found 781.5 °C at 08:00 UTC on 14 April 2026, by a mV source, calibrator
 * CAL-11 due 30 September 2026.
 */
export function passingHeaterTest(limitId: number, over: Record<string, unknown> = {}) {
  return mvSourceTest(limitId, {
    calibratorId: 'CAL-11',
    calibratorDueDate: '2026-09-30',
    performedAt: '2026-04-14T08:00:00Z',
    asFound: 781.5,
    finalElementOk: true,
    latchHeld: true,
    ...over,
  })
}

/**
 * The values a technician reads back from the device for one change item: every device field at its approved value,
 * and for an alarm or alert its priority and enabled state as the register holds them after the change.
 */
export function readBackOf(item: {
  deviceFields: string[]
  changes: Record<string, { to: unknown }>
  readBackExpected?: Record<string, unknown> | null
}): Record<string, unknown> {
  return Object.fromEntries(
    item.deviceFields.map((f) => [f, f in item.changes ? item.changes[f].to : item.readBackExpected?.[f]]),
  )
}

/**
 * Dana Twofold (dual@fernhollow.example, password `dual-role-password`): made an approver at the refinery by the
 * administrator, then given the safety-engineer role too, so an approver who may propose; signed in with a session of
 * their own. Answers the agent, the user's id and the roles the administrator's second call answered.
 */
export async function dualRoleApprover(app: Express, admin: ApiAgent) {
  const fhr = await siteIdByCode(admin, 'FHR')
  const user = await admin.created('/api/users', {
    email: 'dual@fernhollow.example',
    displayName: 'Dana Twofold',
    password: 'dual-role-password',
    roles: [{ siteId: fhr, role: 'approver' }],
  })
  const patched = (
    await admin
      .patch(`/api/users/${user.id}`, {
        roles: [
          { siteId: fhr, role: 'approver' },
          { siteId: fhr, role: 'safety_engineer' },
        ],
      })
      .expect(200)
  ).body
  const agent = new ApiAgent(app)
  await agent.signIn('dual@fernhollow.example', 'dual-role-password')
  return { agent, id: user.id as number, roles: patched.roles as { siteId: number; role: string }[] }
}

/** The body that implements a request's first item with the correct read-back (readBackOf), signed with `password`. */
export function firstItemImplementation(
  cr: { items: (Parameters<typeof readBackOf>[0] & { id: number })[] },
  password: string = DEMO_PASSWORD,
) {
  return { itemId: cr.items[0].id, readBack: readBackOf(cr.items[0]), password }
}

/** The demo accounts a change request passes through (for signedInAs): engineer, both approvers, technician. */
export const CHANGE_PEOPLE = {
  eng: 'engineer',
  approver: 'approver',
  approver2: 'approver2',
  tech: 'technician',
} as const

/** The people a change request passes through, each signed in with their own session. */
export interface ChangeCrew {
  eng: ApiAgent
  approvers: ApiAgent[]
  tech: ApiAgent
}

/**
 * Ticks the before-implementation group of the readiness checklist (procedures, alarm response, training,
 * pre-start-up safety review), which implementation requires (OSHA 1910.119(l)(3)-(4) and (i)).
 */
export async function readyToImplement(eng: ApiAgent, crId: number) {
  for (const c of IMPACT_CHECKLIST.filter((x) => x.group === 'before'))
    await eng.put(`/api/change-requests/${crId}/checklist/${c.item}`, { done: true }).expect(200)
}

/** Creates a draft change request as the engineer (permanent unless `body` says otherwise); answers the draft. */
export async function draftChange(eng: ApiAgent, body: Record<string, unknown>) {
  return (await eng.post('/api/change-requests', { type: 'permanent', title: 'Fixture change', ...body }).expect(201))
    .body
}

/** Creates and submits a change request as the engineer, its before-implementation checklist ticked. */
export async function submitChange(eng: ApiAgent, body: Record<string, unknown>) {
  const created = await draftChange(eng, body)
  await readyToImplement(eng, created.id)
  return (await eng.post(`/api/change-requests/${created.id}/submission`).expect(200)).body
}

/** An item of a change request as the API answers it, with what its read-back needs. */
interface ChangeItem {
  id: number
  deviceFields: string[]
  changes: Record<string, { to: unknown }>
  readBackExpected?: Record<string, unknown> | null
}

/** Signs as many approvals as the request needs, one approver each; answers the approved request. */
export async function approveChange(approvers: ApiAgent[], cr: { id: number; approvalsRequired: number }) {
  let body: unknown = null
  for (const a of approvers.slice(0, cr.approvalsRequired))
    body = (await a.post(`/api/change-requests/${cr.id}/approvals`, { password: DEMO_PASSWORD }).expect(200)).body
  return body as { id: number; status: string; items: ChangeItem[] }
}

/** Submits a change request as the engineer (submitChange) and signs the approvals it needs; answers the approved request. */
export async function submitAndApprove(eng: ApiAgent, approvers: ApiAgent[], body: Record<string, unknown>) {
  return approveChange(approvers, await submitChange(eng, body))
}

/** Implements every item of an approved request with the correct read-back; answers the implemented request. */
export async function implementChange(tech: ApiAgent, cr: { id: number; items: ChangeItem[] }) {
  let body: unknown = null
  for (const item of cr.items) {
    body = (
      await tech
        .post(`/api/change-requests/${cr.id}/implementations`, {
          itemId: item.id,
          readBack: readBackOf(item),
          password: DEMO_PASSWORD,
        })
        .expect(200)
    ).body
  }
  return body as { id: number; status: string }
}

/**
 * A temporary change of a limit's setpoint until `expiresAt` (docs/change-requests.md#temporary-and-emergency-changes), submitted by the crew's
 * engineer and approved by its approvers: not yet on the device.
 */
export async function approvedTemporaryChange(
  crew: ChangeCrew,
  on: { site: { id: number }; limit: { id: number } },
  change: { title: string; setpoint: number; expiresAt: Date },
) {
  const cr = await submitChange(crew.eng, {
    siteId: on.site.id,
    type: 'temporary',
    title: change.title,
    expiresAt: change.expiresAt.toISOString(),
    items: [{ kind: 'modify', limitId: on.limit.id, changes: { setpoint: change.setpoint } }],
  })
  return approveChange(crew.approvers, cr)
}

/**
 * An emergency change lowering an active heater trip (buildActiveHeaterTrip) to 760 °C, submitted by the crew's
 * engineer and implemented by `implementer` (a shift supervisor, signing with `password`) before anyone approves it
 * (docs/change-requests.md#temporary-and-emergency-changes). Answers the submitted request and the implementation's
 * answer.
 */
export async function implementedEmergencyChange(
  crew: ChangeCrew,
  implementer: ApiAgent,
  title: string,
  password: string = DEMO_PASSWORD,
) {
  const { site, limit } = await buildActiveHeaterTrip(crew)
  const cr = await submitChange(crew.eng, {
    siteId: site.id,
    type: 'emergency',
    title,
    items: [{ kind: 'modify', limitId: limit.id, changes: { setpoint: 760 } }],
  })
  const done = (
    await implementer
      .post(`/api/change-requests/${cr.id}/implementations`, firstItemImplementation(cr, password))
      .expect(200)
  ).body
  return { cr, done }
}

/** A change request carried all the way: submitted by the crew's engineer, approved, implemented with read-back. */
export async function carryOutChange(crew: ChangeCrew, body: Record<string, unknown>) {
  return implementChange(crew.tech, await approveChange(crew.approvers, await submitChange(crew.eng, body)))
}

/** A heater trip (see buildHeaterTrip) put in service through its own change request: create item, approvals, implementation. */
export async function buildActiveHeaterTrip(crew: ChangeCrew, opts: Parameters<typeof buildHeaterTrip>[1] = {}) {
  const built = await buildHeaterTrip(crew.eng, opts)
  await carryOutChange(crew, {
    siteId: built.site.id,
    title: `Put ${built.limit.tag} in service`,
    items: [{ kind: 'create', limitId: built.limit.id }],
  })
  const limit = (await crew.eng.get(`/api/limits/${built.limit.id}`).expect(200)).body
  if (limit.status !== 'active') throw new Error(`limit ${limit.tag} is ${limit.status} after its change request`)
  return { ...built, limit }
}

/** Row counts of everything a change-request action writes (sign-in events excluded: signing in is not the action). */
export async function rowCounts(db: Db) {
  const count = async (
    table:
      | 'change_request'
      | 'change_request_item'
      | 'change_request_editor'
      | 'change_request_check'
      | 'signature'
      | 'limit_revision'
      | 'instrument_revision'
      | 'attachment'
      | 'mail_outbox',
  ) => countRows(db, table)
  const audit = await countActionEvents(db)
  const signatureAttempts = await db
    .selectFrom('sign_in_attempt')
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .where('purpose', '=', 'signature')
    .executeTakeFirstOrThrow()
  const states = await db
    .selectFrom('change_request')
    .select(['id', 'status', 'version', 'content_hash'])
    .orderBy('id')
    .execute()
  return {
    changeRequests: await count('change_request'),
    items: await count('change_request_item'),
    editors: await count('change_request_editor'),
    checks: await count('change_request_check'),
    signatures: await count('signature'),
    limitRevisions: await count('limit_revision'),
    instrumentRevisions: await count('instrument_revision'),
    attachments: await count('attachment'),
    mails: await count('mail_outbox'),
    auditEvents: audit,
    signatureAttempts: Number(signatureAttempts.n),
    states,
  }
}

/** The confirmations of putting a bypass in force: measures in place, shown on the operator's screen (docs/bypasses.md#workflow). */
export const ACTIVATE = { measuresInPlace: true, shownToOperator: true } as const
