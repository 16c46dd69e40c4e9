import { createAppAbility, defineRulesFor } from '@shared/abilities/index.ts'
import { tripTestActions } from '@shared/domain/rules/trip-tests.ts'
import { DEFAULT_SITE_POLICY } from '@shared/schemas/sites.ts'
import type { TripTestDto } from '@shared/schemas/trip-tests.ts'
import type { Role } from '@shared/schemas/users.ts'
import { FHR } from '../mount-view.ts'

// A trip-test record of the heater trip TSHH-101 (invented demo data) recorded by RECORDER, signed as given, with
// the rule book's answers for the user asking, as the server sends them (docs/trip-tests.md#who-signs).

export const ME = 7
export const RECORDER = 100
export const AT = '2026-07-06T10:00:00.000Z'
export type Meaning = 'performed' | 'witnessed' | 'returned_to_service' | 'accepted'

export function record(signedAs: [Meaning, number][], roles: Role[], userId: number): TripTestDto {
  const status = signedAs.length === 0 ? 'recorded' : signedAs.length >= 3 ? 'completed' : 'signed'
  const signatures = signedAs.map(([meaning, signer], i) => ({
    id: i + 1,
    userId: signer,
    name: signer === RECORDER ? 'Tomas Ferrant' : 'Someone',
    meaning,
    at: AT,
    contentHash: 'ab'.repeat(32),
    matchesContent: true,
  }))
  // what the server sends with the record: the rule book's answers for the caller
  const actor = {
    id: userId,
    ability: createAppAbility(defineRulesFor({ id: userId, roles: roles.map((role) => ({ siteId: FHR.id, role })) })),
    roles,
  }
  const actions = tripTestActions(
    { siteId: FHR.id, status, recordedById: RECORDER, sil: 2, signatures },
    actor,
    DEFAULT_SITE_POLICY,
    new Date(AT),
  )
  return {
    id: 31,
    limitId: 5,
    limitTag: 'TSHH-101',
    siteId: FHR.id,
    limitRevision: 1,
    kind: 'full',
    scope: 'function',
    method: 'injection',
    injectionPoint: 'sensor',
    sourceMode: 'mv_source',
    coldJunctionC: 20,
    procedureRef: 'TP-101',
    deviceSerial: 'SN-4471',
    calibratorId: 'CAL-12',
    calibratorDueDate: '2026-12-31',
    workOrder: 'WO-88',
    bypassId: null,
    performedAt: AT,
    setpoint: 800,
    tolerance: 0.5,
    toleranceUnit: 'percent_span',
    toleranceEu: 6,
    unit: '°C',
    asFound: 801,
    asFoundSignal: null,
    asFoundResult: 'in_tolerance',
    asLeft: 800,
    asLeftResult: 'in_tolerance',
    channels: [],
    voting: null,
    resetValue: 790,
    latchHeld: true,
    resetRefusedWhileActive: true,
    resetAcceptedAfterReturn: true,
    finalElementOk: true,
    responseTimeSec: null,
    requiredResponseTimeSec: null,
    closingTimeSec: null,
    leakTestPassed: null,
    strokePercent: null,
    setpointRestoredReadBack: null,
    precautions: null,
    passed: true,
    failReasons: [],
    notes: '',
    status,
    witnessRequired: true,
    contentHash: 'ab'.repeat(32),
    recordedById: RECORDER,
    recordedBy: 'Tomas Ferrant',
    source: 'recorded',
    testerName: null,
    importBatchId: null,
    signatures,
    attachments: [],
    createdAt: AT,
    actions,
  }
}
