import type { LimitStatus } from '@shared/domain/operating-window.ts'
import type { InstrumentRecord, Limit } from '@shared/schemas/register.ts'
import type { Role } from '@shared/schemas/users.ts'
import { FHR, type Routes } from '../mount-view.ts'

// A fired heater's high-temperature trip on a thermocouple at Fernhollow Refinery (invented demo data), in any state,
// and the register's answers the limit page and the limit form ask for.

export const TC: InstrumentRecord = {
  id: 9,
  siteId: FHR.id,
  areaId: 3,
  processId: 4,
  processName: 'Heater H-101',
  tag: 'TT-101',
  measuredVariable: 'temperature',
  unit: '°C',
  pressureReference: null,
  rangeLow: 0,
  rangeHigh: 1200,
  normalLow: 700,
  normalHigh: 750,
  designLow: null,
  designHigh: 850,
  burnout: 'upscale',
  signal: { kind: 'thermocouple', tcType: 'K', headTransmitter: false },
  deviceKind: 'limit_controller',
  deviceDescription: 'Limit controller, channel 1',
  model: 'Model 7',
  revision: 1,
  updatedAt: '2026-07-01T08:00:00Z',
}

export function heaterTrip(status: LimitStatus): Limit {
  return {
    id: 5,
    siteId: FHR.id,
    areaId: 3,
    processId: 4,
    processName: 'Heater H-101',
    areaName: 'Crude Unit',
    siteCode: FHR.code,
    tag: 'TSHH-101',
    description: 'Heater outlet high-high temperature trip',
    instrumentIds: [TC.id],
    direction: 'high',
    limitClass: 'trip',
    setpoint: 780,
    deadband: 5,
    deadbandUnit: 'eu',
    onDelaySec: 0,
    offDelaySec: 0,
    latching: true,
    resetRole: 'operator',
    badValueTrip: true,
    action: 'Close the fuel gas valves',
    consequence: 'Tube rupture',
    operatorResponse: '',
    responseTimeMin: null,
    severity: 'severe',
    analyticalLimit: null,
    processSafetyTimeSec: null,
    requiredResponseTimeSec: null,
    bypassPermitted: true,
    maxBypassHours: 8,
    compensatingMeasures: ['Operator watches TI locally every 15 min'],
    testIntervalMonths: 12,
    testGraceDays: null,
    codeSetInterval: false,
    sil: null,
    subsystems: [],
    alarmType: 'absolute',
    causes: '',
    confirmation: '',
    impactCategory: null,
    safetyRelatedAlarm: false,
    claimedRiskReduction: null,
    priority: null,
    priorityExplanation: 'A trip acts by itself',
    status,
    revision: 2,
    protectionState: 'in_service',
    testStatus: status === 'active' ? 'ok' : 'never_tested',
    testDueDate: status === 'active' ? '2027-05-01' : null,
    lastFullPass: status === 'active' ? '2026-05-01' : null,
    operatingWindow: { errors: [], warnings: [] },
    primaryInstrument: {
      id: TC.id,
      tag: TC.tag,
      unit: '°C',
      measuredVariable: 'temperature',
      rangeLow: 0,
      rangeHigh: 1200,
    },
    updatedAt: '2026-07-01T08:00:00Z',
  }
}

const empty = { body: { items: [], total: 0 } }

/** The register's answers around the limit: its site, area, process, instrument and (no) siblings and revisions. */
export function registerRoutes(limit: Limit): Routes {
  return {
    'GET /sites': () => ({ body: { items: [FHR], total: 1 } }),
    'GET /areas': () => ({ body: { items: [{ id: 3, siteId: FHR.id, name: 'Crude Unit' }], total: 1 } }),
    'GET /processes': () => ({ body: { items: [{ id: 4, areaId: 3, name: 'Heater H-101' }], total: 1 } }),
    'GET /instruments': () => ({ body: { items: [TC], total: 1 } }),
    'GET /instruments/9': () => ({ body: TC }),
    'GET /limits': () => ({ body: { items: [limit], total: 1 } }),
    [`GET /limits/${limit.id}`]: () => ({ body: limit }),
    [`GET /limits/${limit.id}/revisions`]: () => empty,
    'GET /change-requests': () => empty,
    'GET /change-proposals': () => empty,
    'GET /trip-tests': () => empty,
    'GET /bypasses': () => empty,
  }
}

/** A user holding these roles at Fernhollow (or at another site). */
export const userWith = (roles: Role[], siteId: number = FHR.id) => ({
  id: 7,
  roles: roles.map((role) => ({ siteId, role })),
})
