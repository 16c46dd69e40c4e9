import type { Db } from '../../../server/db/index.ts'
import type { Database } from '../../../server/db/schema.ts'
import { DEMO_PASSWORD } from '../../../server/seed/demo.ts'
import type { ApiAgent } from './agent.ts'
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

/** The body of a type K thermocouple on a fired heater: range 0–1200 °C, normal 300–650 °C, design 900 °C, upscale burnout. */
export function heaterThermocouple(processId: number, tag: string) {
  return {
    processId,
    tag,
    measuredVariable: 'temperature',
    unit: '°C',
    rangeLow: 0,
    rangeHigh: 1200,
    normalLow: 300,
    normalHigh: 650,
    designLow: null,
    designHigh: 900,
    burnout: 'upscale',
    signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
    deviceKind: 'limit_controller',
  }
}

/** A process, a type K thermocouple instrument (0–1200 °C, normal 300–650) and a proposed high trip at 780 °C, via the API as an engineer. */
export async function buildHeaterTrip(
  eng: ApiAgent,
  opts: { siteCode?: string; sil?: 1 | 2 | 3 | null; setpoint?: number; model?: string } = {},
) {
  const sites = (await eng.get('/api/sites').expect(200)).body.items as { id: number; code: string }[]
  const site = sites.find((s) => s.code === (opts.siteCode ?? 'FHR'))!
  const area = ((await eng.get(`/api/areas?siteId=${site.id}`).expect(200)).body.items as { id: number }[])[0]
  const n = next()
  const proc = (
    await eng
      .post('/api/processes', { areaId: area.id, name: `Fixture heater H-${n}`, description: 'fired heater' })
      .expect(201)
  ).body
  const inst = (
    await eng
      .post('/api/instruments', {
        ...heaterThermocouple(proc.id, `TT-${n}`),
        ...(opts.model === undefined ? {} : { model: opts.model }),
      })
      .expect(201)
  ).body
  const sil = opts.sil ?? null
  const subsystems = sil
    ? [
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
    : []
  const limit = (
    await eng
      .post('/api/limits', {
        ...heaterTrip(proc.id, [inst.id], `TSHH-${n}`, sil, subsystems),
        setpoint: opts.setpoint ?? 780,
      })
      .expect(201)
  ).body
  return { site, area, proc, inst, limit }
}

/**
 * The body of a fired heater's high-temperature trip on the instruments (780 °C, latching, reset by the operator,
 * bypass up to 8 h with a compensating measure), with the given SIL and subsystems.
 */
export function heaterTrip(
  processId: number,
  instrumentIds: number[],
  tag: string,
  sil: number | null,
  subsystems: unknown[],
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
    sil,
    subsystems,
    compensatingMeasures: ['Operator watches TI locally every 15 min'],
    maxBypassHours: 8,
    bypassPermitted: true,
  }
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

/** Creates and submits a change request as the engineer, its before-implementation checklist ticked. */
export async function submitChange(eng: ApiAgent, body: Record<string, unknown>) {
  const created = (
    await eng.post('/api/change-requests', { type: 'permanent', title: 'Fixture change', ...body }).expect(201)
  ).body
  await readyToImplement(eng, created.id)
  return (await eng.post(`/api/change-requests/${created.id}/submission`).expect(200)).body
}

/** Signs as many approvals as the request needs, one approver each; answers the approved request. */
export async function approveChange(approvers: ApiAgent[], cr: { id: number; approvalsRequired: number }) {
  let body: unknown = null
  for (const a of approvers.slice(0, cr.approvalsRequired))
    body = (await a.post(`/api/change-requests/${cr.id}/approvals`, { password: DEMO_PASSWORD }).expect(200)).body
  return body as {
    id: number
    status: string
    items: {
      id: number
      deviceFields: string[]
      changes: Record<string, { to: unknown }>
      readBackExpected?: Record<string, unknown> | null
    }[]
  }
}

/** Implements every item of an approved request with the correct read-back; answers the implemented request. */
export async function implementChange(
  tech: ApiAgent,
  cr: {
    id: number
    items: {
      id: number
      deviceFields: string[]
      changes: Record<string, { to: unknown }>
      readBackExpected?: Record<string, unknown> | null
    }[]
  },
) {
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

/** A heater trip (see buildHeaterTrip) put in service through its own change request: create item, approvals, implementation. */
export async function buildActiveHeaterTrip(crew: ChangeCrew, opts: Parameters<typeof buildHeaterTrip>[1] = {}) {
  const built = await buildHeaterTrip(crew.eng, opts)
  const cr = await submitChange(crew.eng, {
    siteId: built.site.id,
    title: `Put ${built.limit.tag} in service`,
    items: [{ kind: 'create', limitId: built.limit.id }],
  })
  await implementChange(crew.tech, await approveChange(crew.approvers, cr))
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
