import { z } from 'zod'

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

/** A bypass request (DOMAIN.md §3 Bypass). The limit's predefined compensating measures must be confirmed. */
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
export const RejectBypassInputSchema = z.object({
  password: z.string().min(1).max(128),
  comment: z.string().trim().min(1, 'Say why').max(1000),
})
export const RemoveBypassInputSchema = z.object({
  pvClearConfirmed: z.literal(
    true,
    'Confirm that the process value is clear of the limit: removing a bypass while the trip condition is present trips the unit',
  ),
  protectionRestoredConfirmed: z.literal(true, 'Confirm that the protection is back in service'),
  note: z.string().trim().max(1000).default(''),
})

export interface BypassDto {
  id: number
  limitId: number
  limitTag: string
  limitClass: string
  sil: number | null
  siteId: number
  siteCode: string
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
}
