import { z } from 'zod'
import { IdSchema, InstantSchema, ListQuerySchema, repeated, SiteFilterQuerySchema, VerdictSchema } from './common.ts'

/** Kinds of event in the demand and trip log (docs/demands.md). */
export const DEMAND_KINDS = ['real_demand', 'spurious_trip', 'dangerous_failure', 'failure_on_demand'] as const
export const DEMAND_KIND_LABELS: Record<(typeof DEMAND_KINDS)[number], string> = {
  real_demand: 'Real demand',
  spurious_trip: 'Spurious trip',
  dangerous_failure: 'Dangerous failure found outside a test',
  failure_on_demand: 'Device failure on demand',
}

const text = (max: number) => z.string().trim().max(max)

/** `POST /api/demands`: record an event on a limit. */
export const CreateDemandInputSchema = z
  .object({
    limitId: IdSchema,
    kind: z.enum(DEMAND_KINDS),
    outcome: z.enum(['acted', 'failed_to_act']).nullable().optional(),
    occurredAt: z.iso.datetime({ offset: true }),
    description: text(2000).min(1, 'Say what happened'),
    cause: text(1000).default(''),
    evidence: text(1000).default(''),
    workOrder: text(60).default(''),
    wholeFunction: z.boolean().default(false),
    instrumentId: IdSchema.nullable().optional(),
  })
  .superRefine((v, ctx) => {
    if (v.kind === 'spurious_trip' && !v.cause)
      ctx.addIssue({ code: 'custom', path: ['cause'], message: 'Give the cause of the spurious trip' })
  })
export type CreateDemandInput = z.input<typeof CreateDemandInputSchema>
/** The same after parsing, defaults filled: what the router hands the service. */
export type CreateDemandValues = z.output<typeof CreateDemandInputSchema>

/** `POST /api/demands/:id/classification`: a safety engineer's review. */
export const ClassifyDemandInputSchema = z.object({
  /** the event counts in the observed rates (false: not a genuine demand or trip, e.g. recorded by mistake) */
  counts: z.boolean(),
  /** for failures: a dangerous undetected failure (counts in the observed λDU) */
  dangerousUndetected: z.boolean().default(false),
  note: text(1000).min(1, 'Give the reason for the classification'),
})
export type ClassifyDemandInput = z.input<typeof ClassifyDemandInputSchema>
/** The same after parsing, defaults filled: what the router hands the service. */
export type ClassifyDemandValues = z.output<typeof ClassifyDemandInputSchema>

/** `POST /api/demands/:id/credit`: signed crediting of a successful whole-function demand as a proof test. */
export const CreditDemandInputSchema = z.object({
  password: z.string().min(1, 'Enter your password to sign'),
  coveredWhatTheTestCovers: z.literal(true, { message: 'Confirm that the demand covered what the proof test covers' }),
  note: text(1000).min(1, 'Say what the demand exercised and how it was checked'),
})
export type CreditDemandInput = z.input<typeof CreditDemandInputSchema>
/** The same after parsing, defaults filled: what the router hands the service. */
export type CreditDemandValues = z.output<typeof CreditDemandInputSchema>

/** `GET /api/demands` query. */
export const DemandListQuerySchema = ListQuerySchema.extend({
  siteId: repeated(IdSchema),
  limitId: repeated(IdSchema),
  kind: repeated(z.enum(DEMAND_KINDS)),
  from: InstantSchema.optional(),
  to: InstantSchema.optional(),
})
/** The list's filters as the client sends them (the server fills the defaults). */
export type DemandListQuery = Partial<z.infer<typeof DemandListQuerySchema>>

/** `GET /api/demands/rates`: observed against assumed rates; the period defaults to the year before `to` (now). */
export const DemandRatesQuerySchema = SiteFilterQuerySchema.extend({
  limitId: repeated(IdSchema),
  from: InstantSchema.optional(),
  to: InstantSchema.optional(),
})
export type DemandRatesQuery = z.infer<typeof DemandRatesQuerySchema>

/** `GET /api/demands/failure-rates`: observed failure rates; from the first record when `from` is not given. */
export const FailureRatesQuerySchema = SiteFilterQuerySchema.extend({
  from: InstantSchema.optional(),
  to: InstantSchema.optional(),
})
export type FailureRatesQuery = z.infer<typeof FailureRatesQuerySchema>

/**
 * `POST /api/demands/failure-rates/change-request`: a limit's observed λDU of a device group,
 * proposed as a change.
 */
export const ProposeLambdaDuInputSchema = z.object({
  limitId: z.number().int().positive(),
  deviceKind: z.string().min(1).max(40),
  model: z.string().min(1).max(120),
})
export type ProposeLambdaDuInput = z.infer<typeof ProposeLambdaDuInputSchema>

export const DemandSchema = z.object({
  id: z.number(),
  siteId: z.number(),
  siteCode: z.string(),
  limitId: z.number(),
  limitTag: z.string(),
  instrumentId: z.number().nullable(),
  instrumentTag: z.string().nullable(),
  kind: z.enum(DEMAND_KINDS),
  outcome: z.enum(['acted', 'failed_to_act']).nullable(),
  occurredAt: z.string(),
  description: z.string(),
  cause: z.string(),
  evidence: z.string(),
  workOrder: z.string(),
  wholeFunction: z.boolean(),
  status: z.enum(['recorded', 'classified']),
  counts: z.boolean().nullable(),
  dangerousUndetected: z.boolean().nullable(),
  classificationNote: z.string(),
  classifiedBy: z.string().nullable(),
  classifiedAt: z.string().nullable(),
  creditedAsTest: z.boolean(),
  creditNote: z.string(),
  creditedBy: z.string().nullable(),
  creditedAt: z.string().nullable(),
  imported: z.boolean(),
  recordedBy: z.string(),
  createdAt: z.string(),
  actions: z.object({ classify: VerdictSchema, credit: VerdictSchema }),
})
export type DemandDto = z.infer<typeof DemandSchema>

/** Observed vs assumed rates, per limit and per site, over a period. */
export const DemandRateRowSchema = z.object({
  limitId: z.number().nullable(),
  limitTag: z.string().nullable(),
  siteId: z.number(),
  siteCode: z.string(),
  /** the limit's SIL target (null on a site row or a limit that is not SIL-rated) */
  sil: z.number().nullable(),
  /** commissioning date (YYYY-MM-DD) from which "never tested" and the observed rates count; null on a site row */
  commissionedAt: z.string().nullable(),
  /** years the limit was observed in the period (from commissioning or its entry, whichever is later) */
  observedYears: z.number(),
  demands: z.number(),
  spuriousTrips: z.number(),
  observedDemandRatePerYear: z.number().nullable(),
  assumedDemandRatePerYear: z.number().nullable(),
  observedSpuriousRatePerYear: z.number().nullable(),
  assumedSpuriousRatePerYear: z.number().nullable(),
  demandRateAboveAssumed: z.boolean(),
  spuriousRateAboveAssumed: z.boolean(),
})
export type DemandRateRow = z.infer<typeof DemandRateRowSchema>
export interface DemandRates {
  period: { from: string; to: string }
  limits: DemandRateRow[]
  sites: DemandRateRow[]
  note: string
}

/** `PUT /api/demands/assumptions/:limitId`: the rates assumed in the hazard study and the commissioning date. */
export const DemandAssumptionsInputSchema = z.object({
  assumedDemandRatePerYear: z.number().min(0).max(1000).nullable(),
  assumedSpuriousRatePerYear: z.number().min(0).max(1000).nullable(),
  commissionedAt: z.iso.date().nullable(),
  reason: text(500).min(1, 'Give the source of the figures (hazard study, validation record)'),
})
export type DemandAssumptionsInput = z.input<typeof DemandAssumptionsInputSchema>
/** The same after parsing, defaults filled: what the router hands the service. */
export type DemandAssumptionsValues = z.output<typeof DemandAssumptionsInputSchema>
export interface DemandAssumptions {
  limitId: number
  assumedDemandRatePerYear: number | null
  assumedSpuriousRatePerYear: number | null
  commissionedAt: string | null
}

/** One SIL-rated limit whose sensor channels are of a device kind and model, with its assumed λDU. */
export interface FailureRateLimit {
  limitId: number
  limitTag: string
  siteId: number
  siteCode: string
  sil: number | null
  /** λDU per channel assumed in the limit's sensor subsystem, h⁻¹ */
  assumedLambdaDu: number
  verdict: 'supported' | 'above' | 'not_enough_experience'
}
/** Observed λDU of the instruments of one device kind and model (`GET /api/demands/failure-rates`). */
export interface FailureRateGroup {
  deviceKind: string
  /** '' when the instruments have no model recorded (then no comparison is made) */
  model: string
  instrumentTags: string[]
  exposureHours: number
  failures: number
  failuresAtTests: number
  failuresInOperation: number
  failuresOnDemand: number
  pointEstimate: number | null
  upper70: number | null
  upper90: number | null
  limits: FailureRateLimit[]
  /** worst verdict over the limits; 'none' without a model or without a SIL-rated limit to compare with */
  verdict: 'supported' | 'above' | 'not_enough_experience' | 'none'
}
export interface FailureRates {
  period: { from: string | null; to: string }
  groups: FailureRateGroup[]
  /** dangerous undetected failures in operation or on demand recorded without a channel: not given to a model */
  unattributedFailures: number
  note: string
}
