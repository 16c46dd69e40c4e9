import { z } from 'zod'
import type { SilBand } from '../domain/sif-reliability.ts'
import { IdSchema, PageSchema, repeated } from './common.ts'

export const BYPASS_STATUSES = [
  'requested',
  'authorized',
  'rejected',
  'active',
  'removed',
  'cancelled',
  'lapsed',
] as const
export type BypassStatus = (typeof BYPASS_STATUSES)[number]

/**
 * The caution shown where a bypass is requested (docs/bypasses.md#cautions): what a bypass means for the hazard, what
 * the measures must achieve, and that the operators must see it. Common practice; IEC 61511-1 asks for bypasses under
 * written procedures with compensating measures and an indication to the operator (from memory, no clause cited).
 */
export const BYPASS_CAUTION = {
  title: 'While the limit is bypassed, the hazard it protects against is unprotected',
  lines: [
    'The compensating measures must together give the risk reduction the hazard study requires of this function ' +
      'for the whole bypass; if they cannot, do not bypass: make the plant safe another way.',
    'The bypass must show on the operator’s screen (bypass indication in the control system) for as long as it is ' +
      'in force, and the control room must know of it before it is set.',
    'Limitkeeper records the bypass; it does not set or remove it on the device.',
  ],
} as const

/** A bypass request (docs/bypasses.md#workflow). The limit's predefined compensating measures must be confirmed. */
export const CreateBypassInputSchema = z
  .object({
    limitId: z.number().int().positive(),
    reason: z.string().trim().min(5, 'Say why the limit must be bypassed').max(1000),
    plannedStart: z.iso.datetime({ offset: true }),
    plannedEnd: z.iso.datetime({ offset: true }),
    predefinedMeasuresConfirmed: z.boolean().default(false),
    extraMeasures: z.array(z.string().trim().min(1).max(300)).max(20).default([]),
    channelInstrumentId: z.number().int().positive().nullable().default(null),
    changeRequestId: z.number().int().positive().nullable().default(null),
  })
  .superRefine((v, ctx) => {
    if (new Date(v.plannedEnd).getTime() <= new Date(v.plannedStart).getTime())
      ctx.addIssue({ code: 'custom', path: ['plannedEnd'], message: 'The end must be after the start' })
  })
export type CreateBypassInput = z.infer<typeof CreateBypassInputSchema>
/** A bypass request as the client sends it (the server fills the defaults). */
export type CreateBypassBody = z.input<typeof CreateBypassInputSchema>

export const AuthorizeBypassInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign').max(128),
  /** For an extension: hours added to the planned end. */
  hours: z
    .number()
    .positive()
    .max(24 * 90)
    .optional(),
  comment: z.string().trim().max(1000).default(''),
})
export type AuthorizeBypassInput = z.input<typeof AuthorizeBypassInputSchema>
export const RejectBypassInputSchema = z.object({
  password: z.string().min(1).max(128),
  comment: z.string().trim().min(1, 'Say why').max(1000),
})
export type RejectBypassInput = z.input<typeof RejectBypassInputSchema>
/**
 * Putting a bypass in force (docs/bypasses.md#workflow): the person who sets it confirms that the compensating
 * measures are in place and that the bypass shows on the operator's screen, with the control room told.
 */
export const ActivateBypassInputSchema = z.object({
  measuresInPlace: z.literal(true, 'Confirm that the compensating measures are in place'),
  shownToOperator: z.literal(
    true,
    "Confirm that the bypass shows on the operator's screen and that the control room knows of it",
  ),
})
export type ActivateBypassInput = z.infer<typeof ActivateBypassInputSchema>

export const RemoveBypassInputSchema = z.object({
  pvClearConfirmed: z.literal(
    true,
    'Confirm that the process value is clear of the limit: ' +
      'removing a bypass while the trip condition is present trips the unit',
  ),
  protectionRestoredConfirmed: z.literal(true, 'Confirm that the protection is back in service'),
  note: z.string().trim().max(1000).default(''),
})
export type RemoveBypassInput = z.input<typeof RemoveBypassInputSchema>

export interface BypassDto {
  id: number
  limitId: number
  limitTag: string
  limitClass: string
  sil: number | null
  /** The limit's own longest bypass in hours (register field), null when it sets none. */
  limitMaxBypassHours: number | null
  siteId: number
  siteCode: string
  /** The site's IANA time zone: times are shown and written in it. */
  timeZone: string
  areaId: number
  areaName: string
  processName: string
  channelInstrumentId: number | null
  channelTag: string | null
  requestedById: number
  requestedBy: string
  reason: string
  compensatingMeasures: string[]
  plannedStart: string
  plannedEnd: string
  plannedHours: number
  status: BypassStatus
  overdue: boolean
  overdueHours: number
  changeRequestId: number | null
  authorizedAt: string | null
  activatedAt: string | null
  activatedBy: string | null
  removedAt: string | null
  removedBy: string | null
  pvClearConfirmed: boolean | null
  removalNote: string | null
  lapsesAt: string | null
  bypassedHours: number
  authorizations: {
    id: number
    userId: number
    name: string
    meaning: string
    at: string
    comment: string
    contentHash: string
  }[]
  createdAt: string
  /** 'imported': a past bypass brought from a former system by a history import (docs/trip-tests.md#history-import) */
  source: 'recorded' | 'imported'
  /** The server's time when it answered: screens judge the rules on the server's clock. */
  asOf: string
}

/** Filters of the bypass list, the review and its export (`GET /api/bypasses`, `/api/bypass-review`). */
export const BypassFilterSchema = z.object({
  siteId: repeated(IdSchema),
  areaId: repeated(IdSchema),
  processId: repeated(IdSchema),
  limitId: repeated(IdSchema),
  requesterId: repeated(IdSchema),
  authorizerId: repeated(IdSchema),
  status: repeated(z.enum(BYPASS_STATUSES)),
  overdue: z
    .enum(['true', 'false'])
    .transform((v) => v === 'true')
    .optional(),
  /** ISO date-times bounding the period: what was in force (or planned, never in force) at some time in it. */
  from: z.iso.datetime({ offset: true }).optional(),
  to: z.iso.datetime({ offset: true }).optional(),
})
export const BypassListQuerySchema = BypassFilterSchema.extend(PageSchema.shape)
/** The list query as the client sends it. */
export type BypassListQuery = BypassFilters & Partial<z.infer<typeof PageSchema>>
export const BypassReviewQuerySchema = BypassFilterSchema.extend({ format: z.enum(['csv', 'pdf']).optional() })
/** The filters as the client sends them (arrays repeat the query key; `overdue` travels as text). */
export type BypassFilters = Omit<z.output<typeof BypassFilterSchema>, 'overdue'> & { overdue?: 'true' | 'false' }

/**
 * The review's figures (docs/bypasses.md#the-plant-managers-review). A figure is null where nothing happened that it
 * could measure (no bypass in force this month, none removed in the period...): the screens show "—", not "0 h".
 */
export interface BypassReviewKpis {
  activeNow: number
  overdueNow: number
  hoursThisMonth: number | null
  averageDurationHours: number | null
  longerThanShift: number
  shiftHours: number
  withoutMeasures: number
  hoursDegraded: number | null
  sharePastPlannedEnd: number | null
  /** test deferrals requested in the period, of them approved, and all still waiting for a decision */
  deferralsRequested: number
  deferralsApproved: number
  deferralsWaiting: number
}

export interface BypassReviewDto {
  period: { from: string; to: string }
  kpis: BypassReviewKpis
  charts: {
    hoursPerMonth: { month: string; hours: number }[]
    topLimits: { limitId: number; tag: string; hours: number }[]
    overduePerMonth: { month: string; count: number }[]
  }
  items: BypassDto[]
}

// ---- risk erosion (`GET /api/bypass-review/risk`, docs/bypasses.md#risk-erosion)

/** The period and sites of the risk-erosion figures, as the client sends them. */
export type RiskErosionQuery = Pick<BypassFilters, 'siteId' | 'areaId' | 'from' | 'to'>
export interface PfdFigures {
  pfd: number
  rrf: number
  band: SilBand
}

export interface RiskRow {
  limitId: number
  tag: string
  description: string
  targetSil: 1 | 2 | 3
  protectionState: string
  testStatus: string
  design: PfdFigures
  effective: PfdFigures
  bypassedHours: number
  channelBypassedHours: number
  actualIntervalHours: number | null
  belowTarget: boolean
  designBelowTarget: boolean
  /** device models on its channels whose observed λDU bound (70 %) exceeds its sensor λDU */
  observedLambdaDuAbove: { deviceKind: string; model: string; upper70: number; assumedLambdaDu: number }[]
  neverTested: boolean
  /** last passing full test, else the commissioning date (else the entry in the register), YYYY-MM-DD */
  untestedSince: string
  /**
   * hours in the period with a dangerous undetected failure that a test then found
   * (docs/bypasses.md#fault-exposure)
   */
  faultExposureHours: number
  faultExposures: { from: string; to: string; foundAt: string; ongoing: boolean }[]
  /** hours in the period the limit was degraded (failed test, not yet proven again) */
  degradedHours: number
}

export interface RiskErosion {
  period: { from: string; to: string; hours: number }
  items: RiskRow[]
  faultExposureConvention: string
  caution: string
}
