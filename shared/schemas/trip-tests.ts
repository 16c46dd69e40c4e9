import { z } from 'zod'
import type { TestDueStatus } from '../domain/due-dates.ts'
import type { TripTestAction } from '../domain/rules/trip-tests.ts'
import type { Verdict } from '../domain/rules/verdict.ts'
import {
  IdSchema,
  NumberInputSchema,
  OptionalNumberInputSchema,
  PageSchema,
  repeated,
  type SignatureBase,
} from './common.ts'

const num = NumberInputSchema
const optNum = OptionalNumberInputSchema
const optBool = z.boolean().nullable().default(null)

export const TEST_METHODS = ['injection', 'process', 'setpoint_lowered', 'reference_gauge'] as const
export const SIGNATURE_MEANINGS = ['performed', 'witnessed', 'returned_to_service', 'accepted'] as const
export type SignatureMeaning = (typeof SIGNATURE_MEANINGS)[number]
/** What a test covers: the whole function, or one component with its own interval. */
export const TEST_SCOPES = [
  'function',
  'sensor',
  'logic_solver',
  'final_element',
  'valve_leak',
  'partial_stroke',
] as const
export type TestScope = (typeof TEST_SCOPES)[number]
export type ComponentScope = Exclude<TestScope, 'function'>
/** Scopes judged by a trip point (as-found / as-left); the others by stroke, closing time or leak test. */
export const TRIP_POINT_SCOPES: readonly TestScope[] = ['function', 'sensor', 'logic_solver']
/** Methods with which the process really trips: the unit goes down unless it is isolated. */
export const REAL_TRIP_METHODS: readonly (typeof TEST_METHODS)[number][] = ['process', 'setpoint_lowered']

/**
 * Precautions confirmed before the test (docs/trip-tests.md#precautions): a test may move the final element or trip
 * the unit unless it is isolated.
 */
export const TripTestPrecautionsSchema = z.object({
  /** the final element was isolated (or the test is planned with the unit down) */
  isolated: z.boolean(),
  permitToWork: z.string().trim().min(1, 'Enter the permit to work').max(120),
  controlRoomInformed: z.literal(true, { error: 'Inform the control room before the test' }),
  hazardousArea: z.boolean(),
  intrinsicallySafeCalibrator: z.boolean().nullable().default(null),
  gasTestDone: z.boolean().nullable().default(null),
  /** acknowledged that the method drives the process to a real trip */
  realTripAcknowledged: z.boolean().default(false),
})
export type TripTestPrecautions = z.infer<typeof TripTestPrecautionsSchema>

/**
 * The precautions as recorded, one line each, for the record's page and the certificate: what was confirmed, and
 * what was not (a final element left in line, no gas test). `null`: the record carries none (history from elsewhere).
 */
export function precautionLines(p: TripTestPrecautions | null): { text: string; ok: boolean }[] {
  if (!p) return [{ text: 'Precautions not recorded with this test', ok: false }]
  const lines = [
    p.isolated
      ? { text: 'Final element isolated (or the unit down): the test did not act on the process', ok: true }
      : { text: 'Final element NOT isolated: the test could act on the process', ok: false },
    { text: `Permit to work ${p.permitToWork}`, ok: true },
    { text: 'Control room informed before the test', ok: p.controlRoomInformed },
    p.hazardousArea
      ? { text: 'Hazardous area', ok: true }
      : { text: 'Not in a hazardous area (no gas test needed)', ok: true },
  ]
  if (p.hazardousArea) {
    if (p.intrinsicallySafeCalibrator !== null)
      lines.push({
        text: p.intrinsicallySafeCalibrator ? 'Intrinsically safe calibrator' : 'Calibrator NOT intrinsically safe',
        ok: p.intrinsicallySafeCalibrator,
      })
    lines.push({
      text: p.gasTestDone ? 'Gas test done before the work' : 'NO gas test before the work',
      ok: p.gasTestDone === true,
    })
  }
  if (p.realTripAcknowledged)
    lines.push({ text: 'A real trip was expected: operations knew the process would trip', ok: true })
  return lines
}

/** One channel of a voted function: its instrument and where it tripped. */
export const ChannelInputSchema = z.object({
  instrumentId: z.number().int().positive(),
  asFound: optNum,
  noTrip: z.boolean().default(false),
  asLeft: optNum,
})

const tripTestFields = {
  limitId: z.number().int().positive(),
  kind: z.enum(['full', 'partial']),
  scope: z.enum(TEST_SCOPES).default('function'),
  method: z.enum(TEST_METHODS),
  injectionPoint: z.enum(['sensor', 'transmitter_output']).nullable().default(null),
  sourceMode: z.enum(['mv_source', 'tc_simulate']).nullable().default(null),
  coldJunctionC: optNum,
  procedureRef: z.string().trim().max(120).default(''),
  deviceSerial: z.string().trim().max(120).default(''),
  calibratorId: z.string().trim().max(120).default(''),
  calibratorDueDate: z.iso.date().nullable().default(null),
  workOrder: z.string().trim().max(120).default(''),
  bypassId: z.number().int().positive().nullable().default(null),
  performedAt: z.iso.datetime({ offset: true }),
  /** Tolerance; when absent the site's default (± % of span). */
  tolerance: optNum,
  toleranceUnit: z.enum(['eu', 'percent_span']).default('percent_span'),
  /** Where it tripped in engineering units; null with `noTrip` when it did not trip. */
  asFound: optNum,
  /** Or where it tripped in signal units (mA, mV, ohm, V): converted to engineering units by the server. */
  asFoundSignal: z
    .object({ value: num, unit: z.enum(['mA', 'mV', 'ohm', 'V']) })
    .nullable()
    .default(null),
  noTrip: z.boolean().default(false),
  asLeft: optNum,
  /** A voted function tested channel by channel: one entry per channel instrument (then no function as-found). */
  channels: z.array(ChannelInputSchema).max(4).default([]),
  resetValue: optNum,
  latchHeld: optBool,
  resetRefusedWhileActive: optBool,
  resetAcceptedAfterReturn: optBool,
  finalElementOk: optBool,
  responseTimeSec: optNum,
  /** Final element: measured closing (stroke) time, s. */
  closingTimeSec: optNum,
  /** Valve leak test result. */
  leakTestPassed: optBool,
  /** Partial stroke: the travel reached, % of full stroke. */
  strokePercent: optNum,
  setpointRestoredReadBack: optNum,
  notes: z.string().trim().max(5000).default(''),
}

type TripTestShape = z.infer<z.ZodObject<typeof tripTestFields>> & { precautions: TripTestPrecautions | null }

function refineTripTest(v: TripTestShape, ctx: z.RefinementCtx) {
  const tripPoint = TRIP_POINT_SCOPES.includes(v.scope)
  const given = [v.asFound !== null, v.asFoundSignal !== null, v.noTrip].filter(Boolean).length
  if (v.channels.length > 0) {
    if (v.scope !== 'function' && v.scope !== 'sensor')
      ctx.addIssue({
        code: 'custom',
        path: ['channels'],
        message: 'Channels are recorded for a function or sensor test',
      })
    if (v.channels.length < 2)
      ctx.addIssue({ code: 'custom', path: ['channels'], message: 'A voted function has at least two channels' })
    if (given > 0)
      ctx.addIssue({
        code: 'custom',
        path: ['asFound'],
        message: 'With channels, enter where each channel tripped; the function result follows from the voting',
      })
    v.channels.forEach((c, i) => {
      if ((c.asFound !== null) === c.noTrip)
        ctx.addIssue({
          code: 'custom',
          path: ['channels', i, 'asFound'],
          message: 'Enter where this channel tripped, or that it did not trip',
        })
    })
    if (new Set(v.channels.map((c) => c.instrumentId)).size !== v.channels.length)
      ctx.addIssue({ code: 'custom', path: ['channels'], message: 'Each channel instrument once' })
  } else if (tripPoint && given !== 1)
    ctx.addIssue({
      code: 'custom',
      path: ['asFound'],
      message: 'Enter where it tripped (engineering or signal units), or that it did not trip',
    })
  if (v.scope === 'final_element' && v.closingTimeSec === null)
    ctx.addIssue({ code: 'custom', path: ['closingTimeSec'], message: 'Enter the measured closing time' })
  if (v.scope === 'valve_leak' && v.leakTestPassed === null)
    ctx.addIssue({ code: 'custom', path: ['leakTestPassed'], message: 'Enter the leak test result' })
  if (v.scope === 'partial_stroke' && v.strokePercent === null)
    ctx.addIssue({ code: 'custom', path: ['strokePercent'], message: 'Enter the travel reached, % of full stroke' })
  if (v.strokePercent !== null && !(v.strokePercent > 0 && v.strokePercent <= 100))
    ctx.addIssue({ code: 'custom', path: ['strokePercent'], message: 'Enter a travel above 0 and at most 100 %' })
  if (v.closingTimeSec !== null && v.closingTimeSec < 0)
    ctx.addIssue({ code: 'custom', path: ['closingTimeSec'], message: 'A closing time cannot be negative' })
  if (v.method === 'injection' && !v.injectionPoint)
    ctx.addIssue({ code: 'custom', path: ['injectionPoint'], message: 'Say where the signal was injected' })
  if (v.method === 'setpoint_lowered' && v.setpointRestoredReadBack === null) {
    ctx.addIssue({
      code: 'custom',
      path: ['setpointRestoredReadBack'],
      message: 'Read back the restored setpoint from the limiter',
    })
  }
  if (v.method !== 'reference_gauge' && v.method !== 'process' && !v.calibratorId)
    ctx.addIssue({ code: 'custom', path: ['calibratorId'], message: 'Enter the calibrator used' })
  if (v.calibratorId && !v.calibratorDueDate)
    ctx.addIssue({
      code: 'custom',
      path: ['calibratorDueDate'],
      message: "Enter the calibrator's calibration due date",
    })
  const p = v.precautions
  if (p) {
    if (REAL_TRIP_METHODS.includes(v.method) && !p.realTripAcknowledged)
      ctx.addIssue({
        code: 'custom',
        path: ['precautions', 'realTripAcknowledged'],
        message: 'This method drives a real trip: confirm that operations expect it',
      })
    if (p.hazardousArea && p.intrinsicallySafeCalibrator !== true && v.calibratorId)
      ctx.addIssue({
        code: 'custom',
        path: ['precautions', 'intrinsicallySafeCalibrator'],
        message: 'In a hazardous area use an intrinsically safe calibrator',
      })
    if (p.hazardousArea && p.gasTestDone !== true)
      ctx.addIssue({
        code: 'custom',
        path: ['precautions', 'gasTestDone'],
        message: 'In a hazardous area a gas test comes before the work',
      })
  }
}

/**
 * A trip test as recorded (docs/trip-tests.md). The API accepts a record without precautions (`null`: not recorded,
 * as for history brought from elsewhere); the form always sends them (TripTestFormSchema).
 */
export const TripTestInputSchema = z
  .object({ ...tripTestFields, precautions: TripTestPrecautionsSchema.nullable().default(null) })
  .superRefine(refineTripTest)
export type TripTestInput = z.infer<typeof TripTestInputSchema>
/** What the form sends and checks before sending: the same record, precautions required. */
export const TripTestFormSchema = z
  .object({ ...tripTestFields, precautions: TripTestPrecautionsSchema })
  .superRefine(refineTripTest)
export type TripTestBody = z.input<typeof TripTestFormSchema>

export const TripTestSignatureInputSchema = z.object({
  meaning: z.enum(SIGNATURE_MEANINGS),
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().max(2000).default(''),
})

export const DegradationMeasuresInputSchema = z.object({
  compensatingMeasures: z
    .array(z.string().trim().min(1).max(300))
    .min(1, 'Record at least one compensating measure')
    .max(20),
  repairDeadline: z.iso.date(),
  password: z.string().min(1, 'Enter your password to sign').max(128),
})
export type DegradationMeasuresInput = z.input<typeof DegradationMeasuresInputSchema>
export const DeadlineApprovalInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().max(2000).default(''),
})
export type DeadlineApprovalInput = z.input<typeof DeadlineApprovalInputSchema>

const bool = z
  .enum(['true', 'false'])
  .transform((v) => v === 'true')
  .optional()
export const TripTestListQuerySchema = z.object({
  siteId: repeated(IdSchema),
  limitId: IdSchema.optional(),
  scope: z.enum(TEST_SCOPES).optional(),
  passed: bool,
  ...PageSchema.shape,
})
export type TripTestListQuery = z.input<typeof TripTestListQuerySchema>
export const TEST_DUE_STATUSES = ['never_tested', 'ok', 'due_soon', 'in_grace', 'overdue'] as const
export const ScheduleQuerySchema = z.object({
  siteId: repeated(IdSchema),
  areaId: repeated(IdSchema),
  status: repeated(z.enum(TEST_DUE_STATUSES)),
  late: bool,
})
export type ScheduleQuery = z.input<typeof ScheduleQuerySchema>
/** The schedule's filters as the client sends them (`late` travels as text, see getSchedule). */
export type ScheduleParams = Omit<Partial<z.infer<typeof ScheduleQuerySchema>>, 'late'> & { late?: boolean }
/** The test history's filters as the client sends them. */
export type TripTestListParams = Omit<Partial<z.infer<typeof TripTestListQuerySchema>>, 'passed'> & {
  passed?: boolean
}

// ---- test deferrals

export const DEFERRAL_STATUSES = ['requested', 'approved', 'rejected', 'lapsed'] as const
export const TestDeferralInputSchema = z.object({
  limitId: z.number().int().positive(),
  newDueDate: z.iso.date(),
  reason: z.string().trim().min(1, 'Say why the test cannot be done in time').max(2000),
  compensatingMeasures: z
    .array(z.string().trim().min(1).max(300))
    .min(1, 'Record at least one compensating measure while the test is deferred')
    .max(20),
})
export type TestDeferralInput = z.input<typeof TestDeferralInputSchema>
export const DeferralDecisionInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  comment: z.string().trim().max(2000).default(''),
})
export type DeferralDecisionInput = z.input<typeof DeferralDecisionInputSchema>
export const TestDeferralListQuerySchema = z.object({
  siteId: repeated(IdSchema),
  limitId: IdSchema.optional(),
  status: repeated(z.enum(DEFERRAL_STATUSES)),
  ...PageSchema.shape,
})
export type TestDeferralListQuery = z.input<typeof TestDeferralListQuerySchema>
/** The deferral list's filters as the client sends them. */
export type TestDeferralListParams = Partial<z.infer<typeof TestDeferralListQuerySchema>>

/** `POST /api/trip-tests/digest-runs`: sends a site's overdue-test digest now. */
export const DigestRunInputSchema = z.object({ siteId: z.number().int().positive() })
export type DigestRunInput = z.infer<typeof DigestRunInputSchema>

/** The product's risk assessment of a deferral: PFDavg with the stretched interval against the target. */
export interface DeferralRisk {
  intervalMonths: number
  stretchedIntervalHours: number
  designPfd: number | null
  stretchedPfd: number | null
  targetSil: number | null
  meetsTarget: boolean | null
  explanation: string
}

export interface TestDeferralDto {
  id: number
  limitId: number
  limitTag: string
  siteId: number
  sil: number | null
  status: (typeof DEFERRAL_STATUSES)[number]
  /** approved and still moving the due date */
  inForce: boolean
  originalDueDate: string
  newDueDate: string
  extensionDays: number
  reason: string
  compensatingMeasures: string[]
  risk: DeferralRisk
  requiredRole: string
  requestedById: number
  requestedBy: string
  requestedAt: string
  decidedBy: string | null
  decidedAt: string | null
  decisionComment: string
  contentHash: string
  actions: Record<'approve' | 'reject', Verdict>
}
export interface TestDeferralList {
  items: TestDeferralDto[]
  total: number
}

// ---- responses

export type AsFoundResultDto = 'in_tolerance' | 'out_safe' | 'out_dangerous' | 'no_trip' | 'not_applicable'
export type AsLeftResultDto = 'in_tolerance' | 'out' | 'not_applicable'
export interface ChannelResultDto {
  instrumentId: number
  tag: string
  asFound: number | null
  asLeft: number | null
  asFoundResult: 'in_tolerance' | 'out_safe' | 'out_dangerous' | 'no_trip'
  asLeftResult: 'in_tolerance' | 'out'
  passed: boolean
}

/** Where a test record comes from: recorded in Limitkeeper, or imported from a former system. */
export type TripTestSource = 'recorded' | 'imported'

export interface TripTestListItem {
  id: number
  limitId: number
  siteId: number
  limitTag: string
  kind: 'full' | 'partial'
  scope: TestScope
  method: (typeof TEST_METHODS)[number]
  performedAt: string
  asFound: number | null
  asFoundResult: AsFoundResultDto
  asLeft: number | null
  asLeftResult: AsLeftResultDto
  passed: boolean
  status: 'recorded' | 'signed' | 'completed'
  setpoint: number
  toleranceEu: number
  recordedBy: string
  /** 'imported': brought from a former system by a history import (docs/trip-tests.md#history-import) */
  source: TripTestSource
  /** the tester an imported test names (text; null for a test recorded here) */
  testerName: string | null
}
export interface TripTestList {
  items: TripTestListItem[]
  total: number
}

export interface ScheduleItem {
  limitId: number
  tag: string
  description: string
  siteId: number
  siteCode: string
  areaName: string
  testStatus: TestDueStatus
  dueDate: string | null
  lastFullPass: string | null
  testIntervalMonths: number
  protectionState: string
  sil: number | null
  lateTests: number
  deferredTo: string | null
}
export interface ScheduleResponse {
  items: ScheduleItem[]
  total: number
  counts: Partial<Record<TestDueStatus, number>>
}

export interface DegradationItem {
  id: number
  testId: number
  openedAt: string
  reasons: string[]
  compensatingMeasures: string[] | null
  repairDeadline: string | null
  measuresSignedBy: string | null
  measuresSignedAt: string | null
  mttrHours: number | null
  deadlineBeyondMttr: boolean
  deadlineApprovedBy: string | null
  deadlineApprovedAt: string | null
  escalatedAt: string | null
  clearedAt: string | null
  clearedByTestId: number | null
  actions: Record<'signMeasures' | 'approveDeadline', Verdict>
}
export interface DegradationResponse {
  items: DegradationItem[]
  /** the MTTR assumed for the function (largest of its subsystems), h; null without reliability data */
  mttrHours: number | null
}

export interface TripTestDto {
  id: number
  limitId: number
  limitTag: string
  siteId: number
  limitRevision: number
  kind: 'full' | 'partial'
  scope: TestScope
  method: (typeof TEST_METHODS)[number]
  injectionPoint: string | null
  sourceMode: string | null
  coldJunctionC: number | null
  procedureRef: string
  deviceSerial: string
  calibratorId: string
  calibratorDueDate: string | null
  workOrder: string
  bypassId: number | null
  performedAt: string
  setpoint: number
  tolerance: number
  toleranceUnit: 'eu' | 'percent_span'
  toleranceEu: number
  unit: string
  asFound: number | null
  asFoundSignal: { value: number; unit: string } | null
  asFoundResult: AsFoundResultDto
  asLeft: number | null
  asLeftResult: AsLeftResultDto
  channels: ChannelResultDto[]
  voting: { architecture: string; required: number; tripped: number; acted: boolean } | null
  resetValue: number | null
  latchHeld: boolean | null
  resetRefusedWhileActive: boolean | null
  resetAcceptedAfterReturn: boolean | null
  finalElementOk: boolean | null
  responseTimeSec: number | null
  requiredResponseTimeSec: number | null
  closingTimeSec: number | null
  leakTestPassed: boolean | null
  strokePercent: number | null
  setpointRestoredReadBack: number | null
  precautions: TripTestPrecautions | null
  passed: boolean
  failReasons: string[]
  notes: string
  status: 'recorded' | 'signed' | 'completed'
  witnessRequired: boolean
  contentHash: string
  recordedById: number
  recordedBy: string
  /** 'imported': brought from a former system by a history import (docs/trip-tests.md#history-import) */
  source: TripTestSource
  /** the tester an imported test names (text; null for a test recorded here) */
  testerName: string | null
  /** the history import that brought it (its file name and SHA-256 are in the audit trail) */
  importBatchId: number | null
  signatures: (SignatureBase & { matchesContent: boolean })[]
  attachments: { id: number; fileName: string; contentType: string; sizeBytes: number }[]
  createdAt: string
  /** the rule book's answers for the caller (shared/domain/rules/trip-tests.ts, tripTestActions) */
  actions: Record<TripTestAction, Verdict>
}

/** A degraded limit whose signed repair deadline has passed (`GET /api/trip-tests/overdue-repairs`). */
export interface OverdueRepair {
  degradationId: number
  limitId: number
  tag: string
  siteId: number
  areaId: number
  repairDeadline: string
  /** the hourly job has mailed the plant managers and shift supervisors about it */
  escalated: boolean
}

/** A deferral open now: requested, or approved and still in force (shift handover). */
export interface OpenDeferral {
  id: number
  limitId: number
  tag: string
  areaId: number
  status: 'requested' | 'approved'
  originalDueDate: string
  newDueDate: string
}
