import type { AppAbility } from '../../../shared/abilities/index.ts'
import {
  type ProposalAction,
  changeProposalRules,
  raiseProposalVerdict,
} from '../../../shared/domain/rules/change-proposals.ts'
import type {
  ChangeProposalDto,
  ChangeProposalListQuery,
  CreateChangeProposalInput,
} from '../../../shared/schemas/change-proposals.ts'
import { notRetiredVerdict } from '../../../shared/domain/rules/limits.ts'
import { readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { enforce, validationFailed } from '../../errors.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import { recipientsOf, userContact } from '../users/users.repository.ts'
import { limitRecordOf } from '../register/register.mappers.ts'
import * as repo from './change-proposals.repository.ts'

const ENTITY = 'ChangeProposal'
type Trx = Parameters<typeof repo.insertProposal>[0]

function toDto(r: repo.ProposalRow): ChangeProposalDto {
  return {
    ...limitRecordOf(r),
    title: r.title,
    reason: r.reason,
    status: r.status,
    proposerId: r.proposer_id,
    proposerName: r.proposer_name,
    createdAt: r.created_at.toISOString(),
    decidedBy: r.decided_by_name,
    decidedAt: r.decided_at?.toISOString() ?? null,
    declineReason: r.decline_reason,
    changeRequestId: r.change_request_id,
  }
}

export async function getProposal(deps: AppDeps, ability: AppAbility, id: number, db: AppDeps['db'] | Trx = deps.db) {
  const row = readableRow(await repo.findProposal(db, id), ability, 'ChangeProposal', 'Change proposal')
  return toDto(row)
}

export async function listProposals(
  deps: AppDeps,
  userId: number,
  q: Omit<ChangeProposalListQuery, 'siteId'> & { siteIds: number[] },
) {
  const { total, rows } = await repo.listProposals(deps.db, { ...q, userId })
  return { total, items: rows.map(toDto) }
}

/** Raises a proposal; the site's safety engineers are told by mail. */
export async function createProposal(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateChangeProposalInput,
) {
  enforce(raiseProposalVerdict(input.siteId, { id: ctx.actorId!, ability }))
  const id = await deps.db.transaction().execute(async (trx) => {
    if (input.limitId !== null) {
      const limit = await repo.limitSite(trx, input.limitId)
      if (!limit || limit.site_id !== input.siteId)
        throw validationFailed({ limitId: ['Choose a limit of the same site'] })
      enforce(notRetiredVerdict(limit))
    }
    const newId = await repo.insertProposal(trx, { ...input, proposerId: ctx.actorId!, now: deps.clock.now() })
    const engineers = await recipientsOf(trx, input.siteId, 'proposalRaised')
    await mailNotice(trx, deps.clock, engineers, {
      subject: `Change proposal #${newId}: ${input.title}`,
      topic: 'change_request',
      paragraphs: [
        `What: ${input.title}`,
        `Why: ${input.reason}`,
        'Take it up into a change request or decline it with a reason.',
      ],
      link: recordLink(deps.config.appUrl, 'proposals', 'change proposal', newId),
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_proposal.create',
      entityType: ENTITY,
      entityId: newId,
      after: input,
    })
    return newId
  })
  return getProposal(deps, ability, id)
}

/** Locks the proposal and enforces the rule book's answer. */
async function guard(ability: AppAbility, ctx: AuditContext, trx: Trx, id: number, action: ProposalAction) {
  const row = readableRow(await repo.findProposal(trx, id, true), ability, 'ChangeProposal', 'Change proposal')
  enforce(changeProposalRules({ siteId: row.site_id, status: row.status }, { id: ctx.actorId!, ability })[action])
  return row
}

/**
 * Takes a proposal up: links the change request developed from it (a request of the same site, not withdrawn or
 * rejected). Called by the endpoint and, in the same transaction, when a request is created from the proposal.
 */
export async function takeUpInTransaction(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  trx: Trx,
  id: number,
  changeRequestId: number,
) {
  const row = await guard(ability, ctx, trx, id, 'takeUp')
  const cr = await repo.requestForTakeUp(trx, changeRequestId)
  if (!cr || cr.site_id !== row.site_id)
    throw validationFailed({ changeRequestId: ['Choose a change request of the same site'] })
  if (cr.status === 'withdrawn' || cr.status === 'rejected')
    throw validationFailed({ changeRequestId: [`Change request #${cr.id} is ${cr.status}`] })
  await repo.decideProposal(trx, id, { status: 'taken_up', by: ctx.actorId!, at: deps.clock.now(), changeRequestId })
  await appendAudit(trx, deps.clock, ctx, {
    action: 'change_proposal.take_up',
    entityType: ENTITY,
    entityId: id,
    after: { status: 'taken_up', changeRequestId },
  })
}

export async function takeUpProposal(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  changeRequestId: number,
) {
  await deps.db.transaction().execute((trx) => takeUpInTransaction(deps, ability, ctx, trx, id, changeRequestId))
  return getProposal(deps, ability, id)
}

/** Declines a proposal with a reason; the proposer is told by mail. */
export async function declineProposal(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  reason: string,
) {
  await deps.db.transaction().execute(async (trx) => {
    const row = await guard(ability, ctx, trx, id, 'decline')
    await repo.decideProposal(trx, id, {
      status: 'declined',
      by: ctx.actorId!,
      at: deps.clock.now(),
      declineReason: reason,
    })
    const proposer = await userContact(trx, row.proposer_id)
    await mailNotice(trx, deps.clock, [proposer], {
      subject: `Change proposal #${id} declined: ${row.title}`,
      topic: 'change_request',
      paragraphs: [`Your proposal "${row.title}" was declined.`, `Reason: ${reason}`],
      link: recordLink(deps.config.appUrl, 'proposals', 'change proposal', id),
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_proposal.decline',
      entityType: ENTITY,
      entityId: id,
      after: { status: 'declined', reason },
      reason,
    })
  })
  return getProposal(deps, ability, id)
}
