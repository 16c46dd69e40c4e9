import { z } from 'zod'
import { checkPriorityMatrix, DEFAULT_ALARM_PHILOSOPHY, DEFAULT_PRIORITY_MATRIX } from '../domain/priority.ts'
import { AlarmPolicySchema, DEFAULT_ALARM_POLICY } from './alarms.ts'
import { DISCIPLINES } from './change-requests.ts'
import { RoleSchema } from './users.ts'
import { isKnownTimeZone, parsePatch } from './common.ts'

const cell = z.enum(['low', 'medium', 'high', 'critical', 'alert'])
/** The alarm priority matrix: severity rows × time-to-respond columns (docs/domain/alarm-classification.md). */
export const PriorityMatrixSchema = z
  .object({
    responseTimeBoundsMin: z.array(z.number().positive()).min(1),
    rows: z.object({ severe: z.array(cell), major: z.array(cell), moderate: z.array(cell), minor: z.array(cell) }),
  })
  .superRefine((m, ctx) => {
    for (const problem of checkPriorityMatrix(m)) ctx.addIssue({ code: 'custom', message: problem })
  })

const priorityStyle = z.object({
  label: z.string().trim().min(1).max(24),
  color: z
    .string()
    .trim()
    .regex(/^(#[0-9a-fA-F]{6}|[a-z][a-z-]{1,23})$/, 'Use a #rrggbb colour or a theme colour name'),
})
/** The parts of the site's alarm philosophy the register applies (docs/domain/alarm-classification.md). */
export const AlarmPhilosophySchema = z.object({
  longResponseAs: z.enum(['alert', 'lowest_priority']).default(DEFAULT_ALARM_PHILOSOPHY.longResponseAs),
  shortResponseMin: z.number().min(0).max(60).default(DEFAULT_ALARM_PHILOSOPHY.shortResponseMin),
  priorities: z
    .object({ low: priorityStyle, medium: priorityStyle, high: priorityStyle, critical: priorityStyle })
    .default(DEFAULT_ALARM_PHILOSOPHY.priorities),
})

/** Site policies (docs/conventions.md#site-policies; defaults are common practice, no standard behind the numbers). */
export const SitePolicySchema = z.object({
  bypassMaxHoursSupervisor: z
    .number()
    .positive()
    .max(24 * 30)
    .default(12),
  bypassMaxHoursManager: z
    .number()
    .positive()
    .max(24 * 90)
    .default(72),
  bypassAuthorizationLapseHours: z.number().positive().max(72).default(4),
  compensatingMeasuresRequiredFor: z.enum(['trips_and_sil', 'all', 'sil_only']).default('trips_and_sil'),
  bypassExpiryWarningHours: z.number().min(0).max(24).default(1),
  bypassEscalationEveryHours: z.number().positive().max(48).default(4),
  approvalsRequiredSil: z.number().int().min(1).max(5).default(2),
  approvalsRequiredOther: z.number().int().min(1).max(5).default(1),
  approvalExpiryDays: z.number().int().min(1).max(365).default(30),
  /** discipline reviews a change request needs before approval (docs/change-requests.md#discipline-reviews) */
  disciplineReviews: z
    .array(z.enum(DISCIPLINES))
    .max(3)
    .refine((a) => new Set(a).size === a.length, 'Name each discipline once')
    .default([]),
  testGraceFraction: z.number().min(0).max(0.5).default(0.1),
  testGraceMaxDays: z.number().int().min(0).max(90).default(30),
  /** Share of the interval given as grace to SIL-rated functions: 0, a late one needs an approved deferral. */
  testGraceFractionSil: z.number().min(0).max(0.5).default(0),
  /** Who approves a test deferral, by the function's SIL ('none': not SIL-rated). */
  deferralApproverRole: z
    .object({
      none: RoleSchema.default('approver'),
      sil1: RoleSchema.default('approver'),
      sil2: RoleSchema.default('plant_manager'),
      sil3: RoleSchema.default('plant_manager'),
      sil4: RoleSchema.default('plant_manager'),
    })
    .default({
      none: 'approver',
      sil1: 'approver',
      sil2: 'plant_manager',
      sil3: 'plant_manager',
      sil4: 'plant_manager',
    }),
  /** Longest deferral as a share of the test interval (at most half of it). */
  deferralMaxFraction: z.number().min(0).max(0.5).default(0.25),
  witnessRequiredFor: z.enum(['sil_only', 'all', 'none']).default('sil_only'),
  defaultTolerancePercentSpan: z.number().positive().max(10).default(0.5),
  priorityMatrix: PriorityMatrixSchema.default(DEFAULT_PRIORITY_MATRIX),
  alarms: AlarmPolicySchema.default(DEFAULT_ALARM_POLICY),
  alarmPhilosophy: AlarmPhilosophySchema.default(AlarmPhilosophySchema.parse({})),
  /** A successful real demand of the whole function may be credited as a proof test (engineer signs). */
  demandCreditAllowed: z.boolean().default(false),
  /** Hours between scheduled reconciliations of a live device (docs/reconciliation.md); a source may override. */
  reconcileLiveEveryHours: z
    .number()
    .positive()
    .max(24 * 31)
    .default(1),
})
export type SitePolicy = z.infer<typeof SitePolicySchema>

/** The default policy of a new site. */
export const DEFAULT_SITE_POLICY: SitePolicy = SitePolicySchema.parse({})

const timeZone = z
  .string()
  .refine(isKnownTimeZone, { message: 'Unknown time zone (use an IANA name such as Europe/Vienna)' })

export const SiteSchema = z.object({
  id: z.number().int(),
  code: z.string(),
  name: z.string(),
  timeZone: z.string(),
  policy: SitePolicySchema,
})
export type Site = z.infer<typeof SiteSchema>

export const CreateSiteInputSchema = z.object({
  code: z
    .string()
    .trim()
    .min(1, 'Enter a code')
    .max(16)
    .regex(/^[A-Z0-9-]+$/, 'Use capital letters, digits and dashes'),
  name: z.string().trim().min(1, 'Enter a name').max(120),
  timeZone,
  policy: SitePolicySchema.partial().optional(),
})
export const UpdateSiteInputSchema = z.object({
  name: z.string().trim().min(1).max(120).optional(),
  timeZone: timeZone.optional(),
  policy: SitePolicySchema.partial().optional(),
})
export type CreateSiteInput = z.input<typeof CreateSiteInputSchema>
export type UpdateSiteInput = z.input<typeof UpdateSiteInputSchema>

/**
 * `PATCH /api/sites/:id`: keeps only the fields that were sent, the policy's included, so that the defaults of the
 * fields it did not name cannot reset them.
 */
export function parseSitePatch(raw: unknown) {
  const top = parsePatch(UpdateSiteInputSchema, raw)
  const rawPolicy = raw && typeof raw === 'object' && 'policy' in raw ? raw.policy : undefined
  return { ...top, ...(rawPolicy !== undefined ? { policy: parsePatch(SitePolicySchema.partial(), rawPolicy) } : {}) }
}

export const AreaSchema = z.object({ id: z.number().int(), siteId: z.number().int(), name: z.string() })
export type Area = z.infer<typeof AreaSchema>
export const CreateAreaInputSchema = z.object({
  siteId: z.number().int().positive(),
  name: z.string().trim().min(1, 'Enter a name').max(120),
})
export type CreateAreaInput = z.input<typeof CreateAreaInputSchema>
export const UpdateAreaInputSchema = z.object({ name: z.string().trim().min(1).max(120) })
