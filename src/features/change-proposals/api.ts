import type {
  ChangeProposalDto,
  ChangeProposalList,
  CreateChangeProposalInput,
  ProposalStatus,
} from '@shared/schemas/change-proposals.ts'
import { http } from '@/api/client'

/** Cache keys of the proposals (Pinia Colada); the lists' keys start with `all` too. */
export const proposalKeys = {
  all: ['change-proposals'] as const,
  one: (id: number) => ['change-proposals', id] as const,
  /** the proposals of a limit (its page's panel) */
  limit: (limitId: number) => ['change-proposals', 'limit', limitId] as const,
  list: (q: ProposalListQuery) => ['change-proposals', 'list', JSON.stringify(q)] as const,
}

/** `/api/change-proposals` (docs/change-requests.md#change-proposals). */
export interface ProposalListQuery {
  siteId?: number[]
  status?: ProposalStatus[]
  limitId?: number
  mine?: 'true'
  page: number
  pageSize: number
}
export const listProposals = (query: ProposalListQuery) =>
  http.get<ChangeProposalList>('/change-proposals', { ...query })
export const getProposal = (id: number) => http.get<ChangeProposalDto>(`/change-proposals/${id}`)
export const createProposal = (body: CreateChangeProposalInput) =>
  http.post<ChangeProposalDto>('/change-proposals', body)
export const declineProposal = (id: number, reason: string) =>
  http.post<ChangeProposalDto>(`/change-proposals/${id}/decline`, { reason })

export const PROPOSAL_STATUS_LABELS: Record<ProposalStatus, string> = {
  open: 'Open',
  taken_up: 'Taken up',
  declined: 'Declined',
}
export const PROPOSAL_STATUS_COLORS: Record<ProposalStatus, string> = {
  open: 'info',
  taken_up: 'success',
  declined: 'secondary',
}
