import { z } from 'zod'
import type { AlarmStateKind } from '../domain/rules/alarm-states.ts'
import type { Verdict } from '../domain/rules/verdict.ts'
import type { BypassStatus } from './bypasses.ts'
import { IdSchema } from './common.ts'
import type { OpenDeferral } from './trip-tests.ts'

// The shift handover (docs/shift-handover.md): the state of protection of one or more areas of a site, handed over by
// the outgoing shift supervisor with notes and accepted by the incoming one, both signing the same content hash.

export const SHIFT_HANDOVER_STATUSES = ['handed_over', 'accepted', 'superseded'] as const
export type ShiftHandoverStatus = (typeof SHIFT_HANDOVER_STATUSES)[number]

/** `GET /api/shift-handovers/state?areaId=1&areaId=2`: the live state of the areas (one site). */
export const ShiftHandoverStateQuerySchema = z.object({
  areaId: z.preprocess(
    (v) => (v === undefined ? [] : Array.isArray(v) ? v : [v]),
    z.array(IdSchema).min(1, 'Choose at least one area').max(50),
  ),
})

const password = z.string().min(1, 'Enter your password to sign').max(128)
const hash = z.string().regex(/^[0-9a-f]{64}$/, 'The content hash of what was shown')

/** The outgoing shift supervisor hands over what they were shown (its hash), with their notes. */
export const HandOverInputSchema = z.object({
  areaIds: z.array(z.number().int().positive()).min(1, 'Choose at least one area').max(50),
  notes: z.string().trim().max(4000).default(''),
  stateHash: hash,
  password,
})
export type HandOverInput = z.infer<typeof HandOverInputSchema>

/** The incoming shift supervisor accepts the handover they were shown (its content hash). */
export const AcceptHandoverInputSchema = z.object({ contentHash: hash, password })

/** A bypass as the handover shows it: no running figures, so the hash covers what was shown, not when. */
export interface HandoverBypass {
  id: number
  limitId: number
  limitTag: string
  channelTag: string | null
  status: BypassStatus
  overdue: boolean
  plannedStart: string
  plannedEnd: string
  lapsesAt: string | null
  compensatingMeasures: string[]
  reason: string
}

/**
 * An alarm shelved, suppressed by design or out of service, as the handover shows it (docs/alarms.md#alarm-states):
 * the incoming shift takes over what the outgoing one silenced.
 */
export interface HandoverAlarmState {
  id: number
  tag: string
  kind: AlarmStateKind
  reason: string
  startedBy: string
  until: string
  /** past its `until` and still active */
  overdue: boolean
  /** started under a shift supervisor's signature */
  signed: boolean
}

/** The state of protection of one area. Further sections are added as keys of their own. */
export interface AreaProtection {
  area: { id: number; name: string }
  bypasses: HandoverBypass[]
  degraded: {
    limitId: number
    tag: string
    since: string
    reasons: string[]
    compensatingMeasures: string[] | null
    repairDeadline: string | null
    measuresSignedBy: string | null
    /** the signed repair deadline has passed (absent in handovers signed before it was shown) */
    repairDeadlinePassed?: boolean
  }[]
  overdueTests: { limitId: number; tag: string; testStatus: string; dueDate: string | null; sil: number | null }[]
  temporaryChanges: {
    id: number
    title: string
    status: string
    expiresAt: string | null
    /** past its end and not reverted: "expired, to be reverted" (absent when not) */
    expiredToRevert?: boolean
  }[]
  /** test deferrals requested or in force (absent in handovers signed before they were shown) */
  deferrals?: Omit<OpenDeferral, 'areaId'>[]
  /** alarm states in force on the area's limits (absent when there is none, and in handovers signed before) */
  alarmStates?: HandoverAlarmState[]
}

/** What a handover shows and both supervisors sign: the site and its areas' state. */
export interface HandoverSnapshot {
  site: { id: number; name: string; timeZone: string }
  areas: AreaProtection[]
  /** alarm states in force on tags the register does not hold, so of no area (absent when there is none) */
  alarmStatesWithoutArea?: HandoverAlarmState[]
}

export interface ShiftHandoverDto {
  id: number
  siteId: number
  areaIds: number[]
  status: ShiftHandoverStatus
  notes: string
  snapshot: HandoverSnapshot
  stateHash: string
  contentHash: string
  handedOverBy: { id: number; name: string }
  handedOverAt: string
  acceptedBy: { id: number; name: string } | null
  acceptedAt: string | null
  signatures: { id: number; name: string; meaning: string; at: string; contentHash: string }[]
  /** Whether the live state of its areas still hashes to the state handed over. */
  stateUnchanged: boolean
}

export interface ShiftHandoverState extends HandoverSnapshot {
  /** When it was read (shown, not signed). */
  asOf: string
  stateHash: string
  /** Handovers of these areas waiting for the incoming shift supervisor, newest first. */
  pending: ShiftHandoverDto[]
  /** The last handovers of these areas, newest first. */
  recent: ShiftHandoverDto[]
  actions: { handOver: Verdict }
}
