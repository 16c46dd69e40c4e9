import { z } from 'zod'
import { IdSchema, ListQuerySchema, type ListResult, repeated } from './common.ts'

/**
 * Change proposals (docs/change-requests.md#change-proposals): what should change and why, raised by operators,
 * technicians, control engineers and shift supervisors; a safety engineer takes one up into a change request or
 * declines it with a reason.
 */
export const PROPOSAL_STATUSES = ['open', 'taken_up', 'declined'] as const
export type ProposalStatus = (typeof PROPOSAL_STATUSES)[number]

export const CreateChangeProposalInputSchema = z.object({
  siteId: z.number().int().positive().max(2_147_483_647),
  limitId: z.number().int().positive().max(2_147_483_647).nullable().default(null),
  title: z.string().trim().min(1, 'Say what should change').max(200),
  reason: z.string().trim().min(1, 'Say why it should change').max(5000),
})
export type CreateChangeProposalInput = z.infer<typeof CreateChangeProposalInputSchema>

export const TakeUpProposalInputSchema = z.object({
  changeRequestId: z.number().int().positive().max(2_147_483_647),
})
export const DeclineProposalInputSchema = z.object({
  reason: z.string().trim().min(1, 'Say why the proposal is declined').max(2000),
})

export const ChangeProposalListQuerySchema = z.object({
  siteId: repeated(IdSchema),
  status: repeated(z.enum(PROPOSAL_STATUSES)),
  limitId: IdSchema.optional(),
  mine: z
    .enum(['true', 'false'])
    .transform((v) => v === 'true')
    .optional(),
  ...ListQuerySchema.pick({ page: true, pageSize: true }).shape,
})
export type ChangeProposalListQuery = z.infer<typeof ChangeProposalListQuerySchema>

export interface ChangeProposalDto {
  id: number
  siteId: number
  siteCode: string
  limitId: number | null
  limitTag: string | null
  title: string
  reason: string
  status: ProposalStatus
  proposerId: number
  proposerName: string
  createdAt: string
  decidedBy: string | null
  decidedAt: string | null
  declineReason: string | null
  changeRequestId: number | null
}
export type ChangeProposalList = ListResult<ChangeProposalDto>
