import type { z } from 'zod'
import canonicalize from 'canonicalize'
import type { Transaction } from 'kysely'
import { type AppAbility, DISCIPLINE_REVIEWERS } from '../../../shared/abilities/index.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import {
  type ChangeItemDto,
  type ChangeItemInput,
  type ChangeRequestDto,
  type ChangeListItem,
  type ChangeListQuery,
  type ChecklistGroup,
  type ChecklistInput,
  type ChecklistItem,
  type CreateChangeRequestInput,
  type ItemWindow,
  DEVICE_FIELDS_INSTRUMENT,
  DISCIPLINES,
  DEVICE_FIELDS_LIMIT,
  IMPACT_CHECKLIST,
  READ_BACK_STATE_FIELDS,
  type ReadBackComparison,
  type ReadBackExpected,
  type ReviewInput,
  reviewMeaning,
  type UpdateChangeRequestInput,
} from '../../../shared/schemas/change-requests.ts'
import { normalizeDecimal } from '../../../shared/domain/modbus-decode.ts'
import type { Role } from '../../../shared/schemas/users.ts'
import {
  CreateLimitInputSchema,
  UpdateInstrumentInputSchema,
  UpdateLimitInputSchema,
} from '../../../shared/schemas/register.ts'
import { parsePatch, safeParsePatch } from '../../../shared/schemas/common.ts'
import { changeableVerdict, commissionableVerdict } from '../../../shared/domain/rules/limits.ts'
import {
  type ChangeAction,
  type ChangeActor,
  changeRequestRules,
  changeWaitingSites,
  implementItemVerdict,
  openChecks,
  reviewVerdict,
  temporaryState,
} from '../../../shared/domain/rules/change-requests.ts'
import { authorize, ensureVisible } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database } from '../../db/schema.ts'
import { AppError, conflict, enforce, notFound, validationFailed } from '../../errors.ts'
import { attachmentFacts, listAttachments, storeAttachment } from '../attachments/attachments.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import { applyInstrumentDefinition, lockInstrument } from '../register/instruments.service.ts'
import { applyLimitDefinition, evaluateLimit, lockLimit } from '../register/limits.service.ts'
import { limitSnapshot } from '../register/register.mappers.ts'
import { recomputeWindowsForInstrument } from '../register/limits.service.ts'
import { refreshTestSchedule } from '../trip-tests/trip-tests.service.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import {
  contentHash,
  listSignatures,
  type Meaning,
  signAs,
  signatureDto,
  voidSignatures,
} from '../signatures/signatures.ts'
import { findUsersWithRole, recipientsOf, userContact } from '../users/users.repository.ts'
import { takeUpInTransaction } from '../change-proposals/change-proposals.service.ts'
import * as repo from './change-requests.repository.ts'

type Trx = Transaction<Database>
const ENTITY = repo.CHANGE_ENTITY
const DAY = 86_400_000

/** What the signatures of a request cover: its type, texts and items (not its state or checklist). */
function hashOf(
  cr: { type: string; title: string; rationale: string; hazard_reference: string; expires_at: Date | null },
  items: { kind: string; limit_id: number | null; instrument_id: number | null; changes: unknown }[],
  attachments: { sha256: string }[],
) {
  return contentHash({
    type: cr.type,
    title: cr.title,
    rationale: cr.rationale,
    hazardReference: cr.hazard_reference,
    expiresAt: cr.expires_at?.toISOString() ?? null,
    items: items.map((i) => ({ kind: i.kind, limitId: i.limit_id, instrumentId: i.instrument_id, changes: i.changes })),
    attachments: attachments.map((a) => a.sha256),
  })
}

function sameValue(a: unknown, b: unknown): boolean {
  if (typeof a === 'number' || typeof b === 'number') {
    const x = typeof a === 'string' && a.trim() !== '' ? Number(a) : a
    const y = typeof b === 'string' && b.trim() !== '' ? Number(b) : b
    return typeof x === 'number' && typeof y === 'number' && x === y
  }
  return canonicalize(a ?? null) === canonicalize(b ?? null)
}

interface PreparedItem {
  kind: ChangeItemInput['kind']
  limit_id: number | null
  instrument_id: number | null
  changes: Record<string, { from: unknown; to: unknown }>
  base_revision: number
  window_before: ItemWindow | null
  window_after: ItemWindow | null
  silRated: boolean
  read_back_expected: ReadBackExpected | null
}

/** The state an alarm or alert must show on the device after the change: its priority (alarms) and enabled. */
function stateOnDevice(limitClass: string, priority: string | null): ReadBackExpected | null {
  if (limitClass === 'alarm') return priority ? { priority, enabled: true } : { enabled: true }
  if (limitClass === 'alert') return { enabled: true }
  return null
}

/** The fields of a patch that change the record, each with its value before and after. */
function changedFields(record: object, patch: object): PreparedItem['changes'] {
  const current = new Map(Object.entries(record))
  const changes: PreparedItem['changes'] = {}
  for (const [k, to] of Object.entries(patch)) {
    const from: unknown = current.get(k)
    if (!sameValue(from, to)) changes[k] = { from, to }
  }
  return changes
}

/**
 * An item's changes parsed with the record's patch schema (field messages under `items.changes.`), keeping only
 * what differs from the record; an item that changes nothing is refused.
 */
function itemChanges(schema: z.ZodType, record: object, raw: unknown, what: string): PreparedItem['changes'] {
  const parsed = safeParsePatch(schema, raw)
  if (!parsed.success)
    throw validationFailed(
      Object.fromEntries(parsed.error.issues.map((i) => [`items.changes.${i.path.join('.')}`, [i.message]])),
    )
  const changes = changedFields(record, parsed.data)
  if (!Object.keys(changes).length) throw validationFailed({ items: [`The item changes nothing on ${what}`] })
  return changes
}

/** The values an item sets, by field. */
const valuesAfter = (changes: PreparedItem['changes']) =>
  Object.fromEntries(Object.entries(changes).map(([k, v]) => [k, v.to]))

const LIMIT_EDITABLE = new Set(Object.keys(CreateLimitInputSchema.shape).filter((k) => k !== 'processId'))

/** Turns an item input into its stored form: from-values, base revision, operating window before and after. */
async function prepareItem(deps: AppDeps, trx: Trx, siteId: number, input: ChangeItemInput): Promise<PreparedItem> {
  if (input.kind === 'instrument') {
    const inst = await lockInstrument(trx, input.instrumentId)
    if (inst.siteId !== siteId) throw validationFailed({ items: [`Instrument ${inst.tag} belongs to another site`] })
    const changes = itemChanges(UpdateInstrumentInputSchema, inst, input.changes, `instrument ${inst.tag}`)
    const limits = await repo.limitsOnInstrument(trx, inst.id)
    // the window after: apply inside a savepoint of this transaction that is always rolled back (the row is locked
    // by this transaction, so a transaction of its own would wait on it for ever)
    const after = await repo.withRolledBackSavepoint(trx, async () => {
      const draft = parsePatch(UpdateInstrumentInputSchema, valuesAfter(changes))
      await repo.setInstrumentRanges(trx, inst.id, draft)
      const blocked = await recomputeWindowsForInstrument(trx, inst.id)
      return { blocked, rows: await repo.limitsOnInstrument(trx, inst.id) }
    })
    if (after.blocked.length) {
      throw new AppError(
        422,
        ErrorCode.UNPROCESSABLE,
        `The change would put limits outside their operating window: ${after.blocked.map((b) => b.tag).join(', ')}`,
        { limits: after.blocked },
      )
    }
    return {
      kind: 'instrument',
      limit_id: null,
      instrument_id: inst.id,
      changes,
      base_revision: inst.revision,
      silRated: limits.some((l) => l.sil !== null),
      window_before: {
        errors: limits.flatMap((l) => l.window_errors.map((e) => ({ ...e, tag: l.tag }))),
        warnings: limits.flatMap((l) => l.window_warnings.map((e) => ({ ...e, tag: l.tag }))),
      },
      window_after: {
        errors: [],
        warnings: after.rows.flatMap((l) => l.window_warnings.map((e) => ({ ...e, tag: l.tag }))),
      },
      read_back_expected: null,
    }
  }
  const limit = await lockLimit(trx, input.limitId)
  if (limit.siteId !== siteId) throw validationFailed({ items: [`Limit ${limit.tag} belongs to another site`] })
  const before = limit.operatingWindow
  if (input.kind === 'create') {
    enforce(commissionableVerdict(limit))
    const snap = limitSnapshot(limit)
    const changes: PreparedItem['changes'] = {}
    for (const k of Object.keys(snap))
      if (!['revision', 'status', 'priority', 'priorityExplanation', 'operatingWindow', 'siteId', 'areaId'].includes(k))
        changes[k] = { from: null, to: snap[k] }
    return {
      kind: 'create',
      limit_id: limit.id,
      instrument_id: null,
      changes,
      base_revision: limit.revision,
      window_before: null,
      window_after: before,
      silRated: limit.sil !== null,
      read_back_expected: stateOnDevice(limit.limitClass, limit.priority),
    }
  }
  enforce(changeableVerdict(limit))
  if (input.kind === 'retire') {
    return {
      kind: 'retire',
      limit_id: limit.id,
      instrument_id: null,
      changes: { status: { from: 'active', to: 'retired' } },
      base_revision: limit.revision,
      window_before: before,
      window_after: null,
      silRated: limit.sil !== null,
      read_back_expected: null,
    }
  }
  const unknown = Object.keys(input.changes).filter((k) => !LIMIT_EDITABLE.has(k))
  if (unknown.length) throw validationFailed({ items: [`These fields cannot be changed: ${unknown.join(', ')}`] })
  const changes = itemChanges(UpdateLimitInputSchema, limit, input.changes, `limit ${limit.tag}`)
  const draft = CreateLimitInputSchema.parse({
    ...limitSnapshot(limit),
    ...valuesAfter(changes),
    processId: limit.processId,
  })
  const ev = await evaluateLimit(trx, draft, limit.siteId, limit.id)
  if (ev.errors.length) {
    throw new AppError(422, ErrorCode.UNPROCESSABLE, `The new values of ${limit.tag} do not fit its operating window`, {
      operatingWindow: { errors: ev.errors, warnings: ev.warnings },
    })
  }
  return {
    kind: 'modify',
    limit_id: limit.id,
    instrument_id: null,
    changes,
    base_revision: limit.revision,
    window_before: before,
    window_after: { errors: ev.errors, warnings: ev.warnings },
    silRated: limit.sil !== null || draft.sil !== null,
    read_back_expected: stateOnDevice(draft.limitClass, ev.priority),
  }
}

async function writeItems(deps: AppDeps, trx: Trx, crId: number, siteId: number, inputs: ChangeItemInput[]) {
  const seen = new Set<string>()
  for (const i of inputs) {
    const key = i.kind === 'instrument' ? `i${i.instrumentId}` : `l${i.limitId}`
    if (seen.has(key)) throw validationFailed({ items: ['Each limit or instrument appears once in a request'] })
    seen.add(key)
  }
  const prepared: PreparedItem[] = []
  for (const input of inputs) prepared.push(await prepareItem(deps, trx, siteId, input))
  await repo.replaceItems(trx, crId, prepared)
  return prepared
}

async function refreshHash(trx: Trx, crId: number) {
  const cr = (await repo.findRequest(trx, crId))!
  const hash = hashOf(cr, await repo.itemsOf(trx, crId), await listAttachments(trx, ENTITY, crId))
  await repo.updateRequest(trx, crId, { content_hash: hash })
  return hash
}

/** The approvals and discipline reviews the site policy asks of the request as it is written now. */
async function requirementsFor(trx: Trx, siteId: number, crId: number) {
  const policy = policyOf(await repo.siteOf(trx, siteId))
  return {
    approvals_required: (await repo.touchesSilFunction(trx, crId))
      ? policy.approvalsRequiredSil
      : policy.approvalsRequiredOther,
    reviews_required: DISCIPLINES.filter((d) => policy.disciplineReviews.includes(d)),
  }
}

// ---------- reading ----------

async function loadRow(db: AppDeps['db'] | Trx, id: number, lock = false) {
  const row = await repo.findRequest(db, id, lock)
  if (!row) throw notFound('Change request')
  return row
}

/** What the checklist items of a group say now (covered by the implementation and closure signatures). */
function checklistContent(checklist: ChangeRequestDto['checklist'], group: ChecklistGroup) {
  return checklist
    .filter((c) => c.group === group && c.doneAt)
    .map((c) => ({ item: c.item, notApplicable: c.notApplicable, note: c.note }))
}

/**
 * The rule book's answers for this actor (docs/change-requests.md#the-rule-book); read inside the transaction
 * that holds the request's row lock, the answer cannot change before the write.
 */
async function rulesNow(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number, db: AppDeps['db'] | Trx) {
  const cr = await getChangeRequest(deps, ability, id, db)
  const actor: ChangeActor = { id: ctx.actorId!, ability }
  return { cr, actor, rules: changeRequestRules(cr, actor, deps.clock.now()) }
}

/** Locks the request and enforces the rule book's answer for `action`. */
async function guard(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  trx: Trx,
  id: number,
  action: ChangeAction,
) {
  const row = await loadRow(trx, id, true)
  const now = await rulesNow(deps, ability, ctx, id, trx)
  enforce(now.rules[action])
  return { row, ...now }
}

export async function getChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  id: number,
  db: AppDeps['db'] | Trx = deps.db,
): Promise<ChangeRequestDto> {
  const row = await loadRow(db, id)
  ensureVisible(ability, 'ChangeRequest', { siteId: row.site_id }, 'Change request')
  const site = await repo.siteOf(db, row.site_id)
  const proposer = await userContact(db, row.proposer_id)
  const items = await repo.itemsWithTargets(db, id)
  const sigs = await listSignatures(db, ENTITY, [id])
  const checks = await repo.checksOf(db, id)
  const checklist: ChangeRequestDto['checklist'] = IMPACT_CHECKLIST.map((c) => {
    const done = checks.find((x) => x.item === c.item)
    return {
      item: c.item,
      label: c.label,
      group: c.group,
      doneBy: done?.display_name ?? null,
      doneAt: done?.done_at.toISOString() ?? null,
      notApplicable: done?.not_applicable ?? false,
      note: done?.note ?? '',
    }
  })
  const atts = await listAttachments(db, ENTITY, id)
  const reversals = await repo.reversalsOf(db, id)
  const approvals = sigs.filter((s) => s.meaning === 'approved' && !s.voided_at)
  const expiryDays = policyOf(site).approvalExpiryDays
  // what each signature should cover given the content now (recomputed, not the stored hash):
  // a change after signing shows as a mismatch
  const currentHash = hashOf(row, items, atts)
  const expectedHash = (s: { meaning: string; item_id: number | null; user_id: number }) => {
    if (s.meaning === 'closed')
      return contentHash({ request: currentHash, pssr: row.pssr, checklist: checklistContent(checklist, 'closeout') })
    if (s.meaning === 'implemented' && s.item_id)
      return contentHash({
        request: currentHash,
        itemId: s.item_id,
        readBack: items.find((i) => i.id === s.item_id)?.read_back ?? null,
        checklist: checklistContent(checklist, 'before'),
      })
    if (s.meaning === 'implemented') {
      const bulk = items
        .filter((i) => i.implemented_by === s.user_id && i.read_back?.deviceListConfirmed)
        .map((i) => i.id)
      return contentHash({
        request: currentHash,
        items: bulk,
        deviceListConfirmed: true,
        checklist: checklistContent(checklist, 'before'),
      })
    }
    return currentHash
  }
  const itemDtos: ChangeItemDto[] = items.map((i) => {
    const currentRevision = (i.kind === 'instrument' ? i.instrument_revision : i.limit_revision) ?? i.base_revision
    return {
      id: i.id,
      position: i.position,
      kind: i.kind,
      limitId: i.limit_id,
      instrumentId: i.instrument_id,
      targetTag: (i.kind === 'instrument' ? i.instrument_tag : i.limit_tag) ?? '?',
      unit: (i.kind === 'instrument' ? i.instrument_unit : i.limit_unit) ?? '',
      changes: i.changes,
      baseRevision: i.base_revision,
      currentRevision,
      stale: !i.implemented_at && currentRevision !== i.base_revision,
      windowBefore: i.window_before,
      windowAfter: i.window_after,
      silRated: i.limit_sil !== null,
      implementedAt: i.implemented_at?.toISOString() ?? null,
      implementedBy: i.implementer,
      readBack: i.read_back,
      deviceFields: deviceFieldsOf(i.kind, i.changes, i.read_back_expected),
      readBackExpected: i.read_back_expected,
    }
  })
  return {
    id: row.id,
    siteId: row.site_id,
    siteCode: site.code,
    type: row.type,
    title: row.title,
    rationale: row.rationale,
    hazardReference: row.hazard_reference,
    status: row.status,
    proposerId: row.proposer_id,
    proposerName: proposer.display_name,
    editorIds: await repo.editorIdsOf(db, id),
    expiresAt: row.expires_at?.toISOString() ?? null,
    approvalsRequired: row.approvals_required,
    approvalsHeld: approvals.length,
    reviewsRequired: row.reviews_required,
    contentHash: row.content_hash,
    submittedAt: row.submitted_at?.toISOString() ?? null,
    approvedAt: row.approved_at?.toISOString() ?? null,
    implementedAt: row.implemented_at?.toISOString() ?? null,
    closedAt: row.closed_at?.toISOString() ?? null,
    approvalExpiresAt:
      row.approved_at && row.status === 'approved'
        ? new Date(row.approved_at.getTime() + expiryDays * DAY).toISOString()
        : null,
    emergencyFlagged: row.emergency_flagged_at !== null,
    reversesId: row.reverses_id,
    reversals,
    temporaryState: temporaryState(
      { type: row.type, status: row.status, expiresAt: row.expires_at?.toISOString() ?? null, reversals },
      deps.clock.now(),
    ),
    pssr: row.pssr,
    items: itemDtos,
    checklist,
    signatures: sigs.map((s) => ({
      ...signatureDto(s),
      comment: s.comment,
      itemId: s.item_id,
      voided: s.voided_at !== null,
      voidReason: s.void_reason,
      matchesContent: s.content_hash === expectedHash(s),
    })),
    attachments: atts.map((a) => ({
      id: a.id,
      fileName: a.file_name,
      contentType: a.content_type,
      sizeBytes: a.size_bytes,
      uploadedAt: a.uploaded_at.toISOString(),
      uploadedBy: a.display_name ?? '',
    })),
    version: row.version,
    createdAt: row.created_at.toISOString(),
    updatedAt: row.updated_at.toISOString(),
  }
}

function deviceFieldsOf(kind: string, changes: Record<string, unknown>, expected: ReadBackExpected | null): string[] {
  if (kind === 'retire') return []
  const list: readonly string[] = kind === 'instrument' ? DEVICE_FIELDS_INSTRUMENT : DEVICE_FIELDS_LIMIT
  const changed =
    kind === 'create' ? list.filter((f) => f in changes) : Object.keys(changes).filter((f) => list.includes(f))
  const state = READ_BACK_STATE_FIELDS.filter((f) => expected && f in expected)
  return [...changed, ...state]
}

type Person = { id: number; roles: { siteId: number; role: Role }[] }

/** The sites where a person's roles make a request wait for them (to approve, implement, implement first, close). */
/** The change list: mine, waiting for me (to approve or implement), all of my sites, or those of one limit. */
export async function listChangeRequests(
  deps: AppDeps,
  user: Person,
  q: Omit<ChangeListQuery, 'siteId'> & { siteIds: number[] },
): Promise<{ items: ChangeListItem[]; total: number }> {
  const { total, rows } = await repo.listRequests(deps.db, {
    ...q,
    userId: user.id,
    waiting: changeWaitingSites(user.roles),
    now: deps.clock.now(),
  })
  return {
    total,
    items: rows.map((r) => ({
      id: r.id,
      title: r.title,
      type: r.type,
      status: r.status,
      siteId: r.site_id,
      siteCode: r.site_code,
      proposerName: r.proposer_name,
      itemCount: Number(r.item_count),
      approvalsRequired: r.approvals_required,
      approvalsHeld: Number(r.approvals_held),
      updatedAt: r.updated_at.toISOString(),
      createdAt: r.created_at.toISOString(),
      implementedAt: r.implemented_at?.toISOString() ?? null,
      expiresAt: r.expires_at?.toISOString() ?? null,
      emergencyFlagged: r.emergency_flagged_at !== null,
      expiredToRevert: Boolean(r.expired_to_revert),
    })),
  }
}

/** The "waiting for me" counter of the navigation. */
export async function countWaiting(deps: AppDeps, user: Person): Promise<number> {
  return repo.countWaitingRequests(
    deps.db,
    [...new Set(user.roles.map((r) => r.siteId))],
    user.id,
    changeWaitingSites(user.roles),
  )
}

// ---------- writing ----------

function link(deps: AppDeps, id: number) {
  return recordLink(deps.config.appUrl, 'changes', 'change request', id)
}

async function mailTo(
  deps: AppDeps,
  trx: Trx,
  to: { email: string }[],
  subject: string,
  paragraphs: string[],
  crId: number,
) {
  await mailNotice(trx, deps.clock, to, { subject, topic: 'change_request', paragraphs, link: link(deps, crId) })
}

export async function createChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: Omit<CreateChangeRequestInput, 'reversesId' | 'proposalId'> & {
    reversesId?: number | null
    proposalId?: number | null
  },
  opts: { importBatchId?: number; auditBatchId?: string; trx?: Trx } = {},
): Promise<number> {
  authorize(ability, 'create', 'ChangeRequest', { siteId: input.siteId })
  const run = async (trx: Trx) => {
    if (input.reversesId) await checkReversal(deps, ability, ctx, trx, { ...input, reversesId: input.reversesId })
    const id = await repo.insertRequest(trx, {
      reversesId: input.reversesId,
      siteId: input.siteId,
      type: input.type,
      title: input.title,
      rationale: input.rationale,
      hazardReference: input.hazardReference,
      expiresAt: input.expiresAt ? new Date(input.expiresAt) : null,
      proposerId: ctx.actorId!,
      importBatchId: opts.importBatchId ?? null,
      now: deps.clock.now(),
    })
    await writeItems(deps, trx, id, input.siteId, input.items)
    await repo.updateRequest(trx, id, await requirementsFor(trx, input.siteId, id))
    const hash = await refreshHash(trx, id)
    if (input.proposalId) await takeUpInTransaction(deps, ability, ctx, trx, input.proposalId, id)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.create',
      entityType: ENTITY,
      entityId: id,
      after: { ...input, contentHash: hash },
      batchId: opts.auditBatchId,
    })
    return id
  }
  return opts.trx ? run(opts.trx) : deps.db.transaction().execute(run)
}

/**
 * A reversal restores a temporary change (docs/change-requests.md#expired-temporary-changes): the rule book must allow
 * proposing it, it belongs to the same site, and it holds an item for every limit and instrument the temporary change
 * touched. The temporary change's row is locked, so two reversals are not opened at once.
 */
async function checkReversal(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  trx: Trx,
  input: Pick<CreateChangeRequestInput, 'siteId' | 'items'> & { reversesId: number },
) {
  const target = await repo.findRequest(trx, input.reversesId, true)
  if (!target) throw validationFailed({ reversesId: ['No such change request'] })
  const { cr, rules } = await rulesNow(deps, ability, ctx, target.id, trx)
  if (cr.siteId !== input.siteId)
    throw validationFailed({ reversesId: ['The reversal belongs to the site of the temporary change'] })
  enforce(rules.proposeReversal)
  const key = (i: { kind: string; limitId?: number | null; instrumentId?: number | null }) =>
    i.kind === 'instrument' ? `i${i.instrumentId}` : `l${i.limitId}`
  const covered = new Set(input.items.map(key))
  const missing = cr.items.filter((i) => i.kind !== 'retire' && !covered.has(key(i))).map((i) => i.targetTag)
  if (missing.length)
    throw validationFailed({
      items: [`A reversal restores every limit and instrument of the temporary change; missing: ${missing.join(', ')}`],
    })
}

/** Edits a draft or submitted request; a submitted one returns to draft and its signatures are voided. */
export async function updateChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: UpdateChangeRequestInput,
  expectedVersion?: number,
) {
  await deps.db.transaction().execute(async (trx) => {
    const { row } = await guard(deps, ability, ctx, trx, id, 'edit')
    if (expectedVersion !== undefined && expectedVersion !== row.version)
      throw conflict('Someone else changed this request meanwhile; reload it')
    const type = input.type ?? row.type
    const expiresAt = input.expiresAt !== undefined ? input.expiresAt : (row.expires_at?.toISOString() ?? null)
    if (type === 'temporary' && !expiresAt)
      throw validationFailed({ expiresAt: ['A temporary change needs an expiry'] })
    await repo.updateRequest(trx, id, {
      type,
      title: input.title ?? row.title,
      rationale: input.rationale ?? row.rationale,
      hazard_reference: input.hazardReference ?? row.hazard_reference,
      expires_at: expiresAt ? new Date(expiresAt) : null,
      status: 'draft',
      submitted_at: null,
      updated_at: deps.clock.now(),
      version: row.version + 1,
    })
    if (input.items) await writeItems(deps, trx, id, row.site_id, input.items)
    await repo.updateRequest(trx, id, await requirementsFor(trx, row.site_id, id))
    const hash = await refreshHash(trx, id)
    await repo.addEditor(trx, id, ctx.actorId!)
    const voided =
      row.status === 'submitted'
        ? await voidSignatures(trx, deps.clock, ENTITY, id, 'request edited after submission')
        : 0
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.update',
      entityType: ENTITY,
      entityId: id,
      before: { status: row.status, contentHash: row.content_hash },
      after: { ...input, status: 'draft', contentHash: hash, signaturesVoided: voided },
    })
  })
  return getChangeRequest(deps, ability, id)
}

export async function submitChangeRequest(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number) {
  await deps.db.transaction().execute(async (trx) => {
    const { row } = await guard(deps, ability, ctx, trx, id, 'submit')
    const now = deps.clock.now()
    await repo.updateRequest(trx, id, {
      status: 'submitted',
      submitted_at: now,
      updated_at: now,
      version: row.version + 1,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.submit',
      entityType: ENTITY,
      entityId: id,
      after: { status: 'submitted', contentHash: row.content_hash },
    })
    const approvers = (await recipientsOf(trx, row.site_id, 'changeSubmitted')).filter((u) => u.id !== row.proposer_id)
    const proposer = await userContact(trx, row.proposer_id)
    await mailTo(
      deps,
      trx,
      approvers,
      `Change request #${id} waits for your approval: ${row.title}`,
      [
        `${proposer.display_name} submitted change request #${id} "${row.title}" (${row.type}).`,
        `It needs ${row.approvals_required} approval(s). Review the changes, the operating window before and after, ` +
          'and sign if you agree.',
        ...(row.reviews_required.length
          ? [`The ${row.reviews_required.join(', ')} review(s) are signed before the approval.`]
          : []),
      ],
      id,
    )
    // the reviewers of each discipline the request needs (docs/change-requests.md#discipline-reviews)
    for (const d of row.reviews_required) {
      const reviewers = (await findUsersWithRole(trx, row.site_id, DISCIPLINE_REVIEWERS[d])).filter(
        (u) => u.id !== row.proposer_id,
      )
      await mailTo(
        deps,
        trx,
        reviewers,
        `Change request #${id} waits for the ${d} review: ${row.title}`,
        [
          `${proposer.display_name} submitted change request #${id} "${row.title}" (${row.type}).`,
          `The site asks for a ${d} review before approval. ` +
            'Review the changes and sign the review, with your comments.',
        ],
        id,
      )
    }
  })
  return getChangeRequest(deps, ability, id)
}

export async function withdrawChangeRequest(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number) {
  await deps.db.transaction().execute(async (trx) => {
    const { row } = await guard(deps, ability, ctx, trx, id, 'withdraw')
    await repo.updateRequest(trx, id, { status: 'withdrawn', updated_at: deps.clock.now(), version: row.version + 1 })
    await voidSignatures(trx, deps.clock, ENTITY, id, 'request withdrawn')
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.withdraw',
      entityType: ENTITY,
      entityId: id,
      before: { status: row.status },
      after: { status: 'withdrawn' },
    })
  })
  return getChangeRequest(deps, ability, id)
}

/** Signs the request's content as it stands (its hash); answers what the audit record says of the signature. */
async function signRequest(
  trx: Trx,
  deps: AppDeps,
  signer: { id: number; name: string },
  row: { id: number; content_hash: string },
  meaning: Meaning,
  comment: string,
) {
  await signAs(trx, deps.clock, signer, {
    entityType: ENTITY,
    entityId: row.id,
    meaning,
    contentHash: row.content_hash,
    comment,
  })
  return { signer: signer.name, meaning, contentHash: row.content_hash, comment }
}

/**
 * Checks the rule book before the signature password is verified (a refusal costs no password attempt and writes
 * nothing); the answer is checked again inside the locked transaction.
 */
async function precheck(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number, action: ChangeAction) {
  await loadRow(deps.db, id)
  const { rules } = await rulesNow(deps, ability, ctx, id, deps.db)
  const v = rules[action]
  // role and separation of duties first (403); a state refusal is answered after the password, as before
  if (!v.allowed && v.status === 403) enforce(v)
}

/**
 * A signed action on the request: the rule book first (precheck), then the signature password, then the rule book
 * again under the row lock and `work` in that transaction; answers the request as it now stands.
 */
async function signedAction(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  action: ChangeAction,
  password: string,
  work: (
    trx: Trx,
    row: Awaited<ReturnType<typeof guard>>['row'],
    signer: { id: number; name: string },
  ) => Promise<void>,
) {
  await precheck(deps, ability, ctx, id, action)
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const { row } = await guard(deps, ability, ctx, trx, id, action)
    await work(trx, row, signer)
  })
  return getChangeRequest(deps, ability, id)
}

export async function approveChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  { password, comment }: { password: string; comment: string },
) {
  return signedAction(deps, ability, ctx, id, 'approve', password, async (trx, row, signer) => {
    const signed = await signRequest(trx, deps, signer, row, 'approved', comment)
    const held = await repo.countApprovals(trx, id)
    const complete = held >= row.approvals_required
    const now = deps.clock.now()
    await repo.updateRequest(trx, id, {
      ...(complete ? { approved_at: now, ...(row.status === 'submitted' ? { status: 'approved' as const } : {}) } : {}),
      updated_at: now,
      version: row.version + 1,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.approve',
      entityType: ENTITY,
      entityId: id,
      after: { ...signed, approvalsHeld: held, approvalsRequired: row.approvals_required },
    })
    if (complete) {
      await mailTo(
        deps,
        trx,
        [await userContact(trx, row.proposer_id)],
        `Change request #${id} approved: ${row.title}`,
        [
          `Change request #${id} "${row.title}" now holds the ${row.approvals_required} approval(s) it needs.`,
          row.status === 'submitted'
            ? 'A technician can now implement it on the device and read the values back.'
            : 'The emergency change is now approved after the fact.',
        ],
        id,
      )
    }
  })
}

/**
 * Signs a discipline review (docs/change-requests.md#discipline-reviews): the rule book answers who may sign which
 * review and when; the signature covers the request's content hash, with the reviewer's comments.
 */
export async function reviewChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: ReviewInput,
) {
  const { discipline, password, comment } = input
  await loadRow(deps.db, id)
  const before = await rulesNow(deps, ability, ctx, id, deps.db)
  const first = reviewVerdict(before.cr, discipline, before.actor)
  // role and separation of duties first (403), before the password is verified
  if (!first.allowed && first.status === 403) enforce(first)
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    const { cr, actor } = await rulesNow(deps, ability, ctx, id, trx)
    enforce(reviewVerdict(cr, discipline, actor))
    const signed = await signRequest(trx, deps, signer, row, reviewMeaning(discipline), comment)
    await repo.updateRequest(trx, id, { updated_at: deps.clock.now(), version: row.version + 1 })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.review',
      entityType: ENTITY,
      entityId: id,
      after: signed,
    })
  })
  return getChangeRequest(deps, ability, id)
}

export async function rejectChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  { password, comment }: { password: string; comment: string },
) {
  return signedAction(deps, ability, ctx, id, 'reject', password, async (trx, row, signer) => {
    const signed = await signRequest(trx, deps, signer, row, 'rejected', comment)
    await repo.updateRequest(trx, id, { status: 'rejected', updated_at: deps.clock.now(), version: row.version + 1 })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.reject',
      entityType: ENTITY,
      entityId: id,
      after: signed,
    })
    await mailTo(
      deps,
      trx,
      [await userContact(trx, row.proposer_id)],
      `Change request #${id} rejected: ${row.title}`,
      [`${signer.name} rejected change request #${id} "${row.title}".`, `Reason: ${comment}`],
      id,
    )
  })
}

type ItemForReadBack = {
  id: number
  kind: string
  changes: Record<string, { from: unknown; to: unknown }>
  read_back_expected: ReadBackExpected | null
}

/**
 * A value read back equals the approved one: numbers as exact decimals ("412.50" equals 412.5, 412.500001 does
 * not; docs/conventions.md), everything else as canonical JSON.
 */
function readBackEqual(entered: unknown, approved: unknown): boolean {
  if (typeof approved === 'number') {
    if (typeof entered !== 'number' && typeof entered !== 'string') return false
    const text = String(entered).trim()
    return text !== '' && normalizeDecimal(text) === normalizeDecimal(String(approved))
  }
  return canonicalize(entered ?? null) === canonicalize(approved ?? null)
}

/** Each device field of the item as entered beside its approved value. */
function compareReadBack(item: ItemForReadBack, readBack: Record<string, unknown>): ReadBackComparison {
  const expected: Record<string, unknown> = item.read_back_expected ?? {}
  const fields = deviceFieldsOf(item.kind, item.changes, item.read_back_expected).map((field) => {
    const approved = field in item.changes ? item.changes[field].to : expected[field]
    const entered = field in readBack ? readBack[field] : null
    return { field, entered, approved, equal: field in readBack && readBackEqual(entered, approved) }
  })
  return { itemId: item.id, equal: fields.every((f) => f.equal), fields }
}

/** Compares the technician's read-back with the approved values; every device field must be read back equal. */
function checkReadBack(item: ItemForReadBack, readBack: Record<string, unknown>) {
  const errors: Record<string, string[]> = {}
  for (const f of compareReadBack(item, readBack).fields) {
    if (!(f.field in readBack)) errors[`readBack.${f.field}`] = [`Read ${f.field} back from the device`]
    else if (!f.equal)
      errors[`readBack.${f.field}`] = [
        `The device shows ${JSON.stringify(f.entered)}; the approved value is ${JSON.stringify(f.approved)}`,
      ]
  }
  if (Object.keys(errors).length)
    throw new AppError(
      422,
      ErrorCode.UNPROCESSABLE,
      'The read-back does not equal the approved value; nothing was implemented',
      { fields: errors },
    )
}

/** 409 when the limit or instrument of an item changed since the request was written (locks the row). */
async function assertNotStale(
  trx: Trx,
  item: { kind: string; limit_id: number | null; instrument_id: number | null; base_revision: number },
) {
  const row = await repo.lockTargetRevision(trx, item)
  if (row.revision !== item.base_revision) {
    throw conflict(
      `${item.kind === 'instrument' ? 'Instrument' : 'Limit'} ${row.tag} changed since this request was written ` +
        `(revision ${item.base_revision} → ${row.revision}); revise the request`,
    )
  }
}

async function applyItem(
  deps: AppDeps,
  trx: Trx,
  ctx: AuditContext,
  crId: number,
  item: {
    id: number
    kind: string
    limit_id: number | null
    instrument_id: number | null
    base_revision: number
    changes: Record<string, { from: unknown; to: unknown }>
  },
) {
  const to = valuesAfter(item.changes)
  if (item.kind === 'instrument') {
    const inst = await lockInstrument(trx, item.instrument_id!)
    if (inst.revision !== item.base_revision)
      throw conflict(
        `Instrument ${inst.tag} changed since this request was written ` +
          `(revision ${item.base_revision} → ${inst.revision}); revise the request`,
      )
    await applyInstrumentDefinition(trx, deps.clock, ctx, inst, to, {
      changeRequestId: crId,
      reason: `change request #${crId}`,
    })
    return
  }
  const limit = await lockLimit(trx, item.limit_id!)
  if (limit.revision !== item.base_revision)
    throw conflict(
      `Limit ${limit.tag} changed since this request was written ` +
        `(revision ${item.base_revision} → ${limit.revision}); revise the request`,
    )
  if (item.kind === 'create') {
    enforce(commissionableVerdict(limit))
    await applyLimitDefinition(
      trx,
      deps.clock,
      ctx,
      limit,
      {},
      {
        changeRequestId: crId,
        reason: `change request #${crId}: put in service`,
        action: 'limit.activate',
        status: 'active',
      },
    )
    await refreshTestSchedule(trx, limit.id, deps.clock.now())
  } else if (item.kind === 'retire') {
    await applyLimitDefinition(
      trx,
      deps.clock,
      ctx,
      limit,
      {},
      { changeRequestId: crId, reason: `change request #${crId}: retired`, action: 'limit.retire', status: 'retired' },
    )
  } else {
    await applyLimitDefinition(trx, deps.clock, ctx, limit, to, {
      changeRequestId: crId,
      reason: `change request #${crId}`,
      action: 'limit.change',
    })
    await refreshTestSchedule(trx, limit.id, deps.clock.now())
  }
}

/**
 * Compares a read-back with the approved values of one item without implementing anything, for the blind read-back:
 * the technician enters what the device holds first and sees the approved values only in this answer. Answered to
 * whoever may implement the item now; writes nothing.
 */
export async function checkItemReadBack(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { itemId: number; readBack: Record<string, unknown> },
): Promise<ReadBackComparison> {
  await loadRow(deps.db, id)
  const { cr, actor } = await rulesNow(deps, ability, ctx, id, deps.db)
  const dto = cr.items.find((i) => i.id === input.itemId)
  if (!dto) throw notFound('Change request item')
  const v = implementItemVerdict(cr, dto, actor, deps.clock.now())
  if (!v.allowed && !dto.stale) enforce(v)
  if (dto.stale) throw conflict(`${dto.targetTag} changed since this request was written; revise the request`)
  const item = (await repo.itemsOf(deps.db, id)).find((i) => i.id === input.itemId)!
  return compareReadBack(item, input.readBack)
}

/**
 * Implements one item (read-back required, equal to the approved value) or, for an import baseline of new limits,
 * all items at once with one device-list confirmation. Each is an electronic signature, which also covers the
 * before-implementation checklist as it stands.
 */
export async function implementChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { itemId?: number; readBack?: Record<string, unknown>; allItems?: true; password: string; comment: string },
) {
  await precheck(deps, ability, ctx, id, 'implement')
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: ENTITY,
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    const { row, cr, actor, rules } = await guard(deps, ability, ctx, trx, id, 'implement')
    const now = deps.clock.now()
    const emergencyFirst = row.type === 'emergency' && row.status === 'submitted'
    const items = await repo.itemsOf(trx, id)
    const targets = input.allItems ? items.filter((i) => !i.implemented_at) : items.filter((i) => i.id === input.itemId)
    if (!targets.length) throw notFound('Change request item')
    if (!input.allItems) {
      const dto = cr.items.find((i) => i.id === input.itemId)!
      const v = implementItemVerdict(cr, dto, actor, now)
      // a stale item is answered below by the revision check, with the revisions in the message
      if (!v.allowed && !dto.stale) enforce(v)
    }
    // nothing half-applied: while any item still to implement stands on a row that changed since, none is applied
    for (const item of items.filter((i) => !i.implemented_at)) await assertNotStale(trx, item)
    if (input.allItems) enforce(rules.implementAll)
    const checklist = checklistContent(cr.checklist, 'before')
    for (const item of targets) {
      if (!input.allItems) checkReadBack(item, input.readBack ?? {})
      await applyItem(deps, trx, ctx, id, item)
      const readBack = input.allItems ? { deviceListConfirmed: true } : (input.readBack ?? {})
      await repo.markItemImplemented(trx, item.id, signer.id, now, readBack)
      if (!input.allItems) {
        await signAs(trx, deps.clock, signer, {
          entityType: ENTITY,
          entityId: id,
          itemId: item.id,
          meaning: 'implemented',
          contentHash: contentHash({ request: row.content_hash, itemId: item.id, readBack, checklist }),
          comment: input.comment,
        })
      }
    }
    if (input.allItems) {
      await signAs(trx, deps.clock, signer, {
        entityType: ENTITY,
        entityId: id,
        meaning: 'implemented',
        contentHash: contentHash({
          request: row.content_hash,
          items: targets.map((t) => t.id),
          deviceListConfirmed: true,
          checklist,
        }),
        comment: input.comment,
      })
    }
    const remaining = items.length - items.filter((i) => i.implemented_at).length - targets.length
    await repo.updateRequest(trx, id, {
      ...(remaining === 0 ? { status: 'implemented' as const, implemented_at: now } : {}),
      updated_at: now,
      version: row.version + 1,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.implement',
      entityType: ENTITY,
      entityId: id,
      after: {
        signer: signer.name,
        meaning: 'implemented',
        items: targets.map((t) => t.id),
        readBack: input.allItems ? { deviceListConfirmed: true } : input.readBack,
        contentHash: row.content_hash,
        complete: remaining === 0,
      },
    })
    if (remaining === 0) {
      await mailTo(
        deps,
        trx,
        [await userContact(trx, row.proposer_id), ...(await repo.approverContacts(trx, id))],
        `Change request #${id} implemented: ${row.title}`,
        [
          `${signer.name} implemented change request #${id} "${row.title}" on the device and read the values back.`,
          'The safety engineer closes it out once the close-out checklist is complete.',
          ...(emergencyFirst ? ['This is an emergency change: it must be approved within 24 hours.'] : []),
        ],
        id,
      )
    }
  })
  return getChangeRequest(deps, ability, id)
}

export async function closeChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  password: string,
  pssr: { reference: string; findings: string; readyForService: true },
) {
  await precheck(deps, ability, ctx, id, 'close')
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    const { cr, rules } = await rulesNow(deps, ability, ctx, id, trx)
    const open = openChecks(cr, 'closeout')
    if (!rules.close.allowed && rules.close.status === 422 && open.length)
      throw validationFailed(
        { checklist: open.map((label) => `Tick "${label}" first`) },
        'The close-out checklist is not complete',
      )
    enforce(rules.close)
    const now = deps.clock.now()
    const record = { ...pssr, reviewedAt: now.toISOString(), reviewedBy: signer.name }
    await signAs(trx, deps.clock, signer, {
      entityType: ENTITY,
      entityId: id,
      meaning: 'closed',
      contentHash: contentHash({
        request: row.content_hash,
        pssr: record,
        checklist: checklistContent(cr.checklist, 'closeout'),
      }),
    })
    await repo.updateRequest(trx, id, {
      status: 'closed',
      closed_at: now,
      pssr: JSON.stringify(record),
      updated_at: now,
      version: row.version + 1,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.close',
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, meaning: 'closed', pssr: record, contentHash: row.content_hash },
    })
  })
  return getChangeRequest(deps, ability, id)
}

/** Ticks a checklist item, marks it not applicable (with the reason in the note), or clears it. */
export async function tickChecklist(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  item: ChecklistItem,
  input: ChecklistInput,
) {
  if (!IMPACT_CHECKLIST.some((c) => c.item === item)) throw notFound('Checklist item')
  await deps.db.transaction().execute(async (trx) => {
    await guard(deps, ability, ctx, trx, id, 'tick')
    if (input.done)
      await repo.setCheck(trx, id, item, {
        by: ctx.actorId!,
        at: deps.clock.now(),
        note: input.note,
        notApplicable: input.notApplicable,
      })
    else await repo.clearCheck(trx, id, item)
    await appendAudit(trx, deps.clock, ctx, {
      action: !input.done
        ? 'change_request.uncheck'
        : input.notApplicable
          ? 'change_request.not_applicable'
          : 'change_request.check',
      entityType: ENTITY,
      entityId: id,
      after: { item, note: input.note, ...(input.done && input.notApplicable ? { notApplicable: true } : {}) },
    })
  })
  return getChangeRequest(deps, ability, id)
}

/** A draft request holding an import's proposed baseline (one 'create' item per new proposed limit). */
export async function openBaselineChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  trx: Trx,
  p: { siteId: number; limitIds: number[]; importBatchId: number; fileName: string; auditBatchId?: string },
) {
  if (!p.limitIds.length) return null
  return createChangeRequest(
    deps,
    ability,
    ctx,
    {
      siteId: p.siteId,
      type: 'permanent',
      title: `Register baseline from ${p.fileName}`,
      hazardReference: '',
      expiresAt: null,
      rationale:
        `Imported from ${p.fileName} (import batch ${p.importBatchId}). ` +
        'Approving and implementing this request puts the imported limits in service.',
      items: p.limitIds.map((limitId) => ({ kind: 'create' as const, limitId })),
    },
    { importBatchId: p.importBatchId, auditBatchId: p.auditBatchId, trx },
  )
}

export { ENTITY as CHANGE_REQUEST_ENTITY }
export type { Clock }

/**
 * Attaches a file (PDF, PNG, JPEG, checked by content) while the request is a draft or submitted without
 * signatures; the attachments are part of what the signatures cover, so the content hash is recomputed and the
 * uploader becomes an editor of the request (an editor does not approve it).
 */
export async function attachToChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  file: Express.Multer.File | undefined,
) {
  return deps.db.transaction().execute(async (trx) => {
    await guard(deps, ability, ctx, trx, id, 'attach')
    const a = await storeAttachment(trx, deps.clock, file, { entityType: ENTITY, entityId: id, userId: ctx.actorId! })
    const hash = await refreshHash(trx, id)
    await repo.addEditor(trx, id, ctx.actorId!)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.attach',
      entityType: ENTITY,
      entityId: id,
      after: { ...attachmentFacts(a), contentHash: hash },
    })
    return a
  })
}
