import canonicalize from 'canonicalize'
import { sql, type Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import {
  type ChangeItemDto,
  type ChangeItemInput,
  type ChangeRequestDto,
  type ChecklistItem,
  type CreateChangeRequestInput,
  DEVICE_FIELDS_INSTRUMENT,
  DEVICE_FIELDS_LIMIT,
  IMPACT_CHECKLIST,
  type UpdateChangeRequestInput,
} from '../../../shared/schemas/change-requests.ts'
import {
  CreateLimitInputSchema,
  UpdateInstrumentInputSchema,
  UpdateLimitInputSchema,
} from '../../../shared/schemas/register.ts'
import { parsePatch, safeParsePatch } from '../../../shared/schemas/common.ts'
import { allows, authorize, likeEscape } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database } from '../../db/schema.ts'
import { AppError, conflict, forbidden, invalidState, notFound, validationFailed } from '../../errors.ts'
import { listAttachments, storeAttachment } from '../attachments/attachments.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { enqueueMail, mailBodies } from '../mail/mail.outbox.ts'
import { applyInstrumentDefinition, lockInstrument } from '../register/instruments.service.ts'
import { applyLimitDefinition, evaluateLimit, lockLimit } from '../register/limits.service.ts'
import { limitSnapshot } from '../register/register.mappers.ts'
import { recomputeWindowsForInstrument } from '../register/limits.service.ts'
import { refreshTestSchedule } from '../trip-tests/trip-tests.service.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import { contentHash, insertSignature, listSignatures, voidSignatures } from '../signatures/signatures.ts'
import { findUsersWithRole } from '../users/users.repository.ts'

type Trx = Transaction<Database>
const ENTITY = 'ChangeRequest'
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
  window_before: unknown
  window_after: unknown
  silRated: boolean
}

const LIMIT_EDITABLE = new Set(Object.keys(CreateLimitInputSchema.shape).filter((k) => k !== 'processId'))

/** Turns an item input into its stored form: from-values, base revision, operating window before and after. */
async function prepareItem(deps: AppDeps, trx: Trx, siteId: number, input: ChangeItemInput): Promise<PreparedItem> {
  if (input.kind === 'instrument') {
    const inst = await lockInstrument(trx, input.instrumentId)
    if (inst.siteId !== siteId) throw validationFailed({ items: [`Instrument ${inst.tag} belongs to another site`] })
    const parsed = safeParsePatch(UpdateInstrumentInputSchema, input.changes)
    if (!parsed.success)
      throw validationFailed(
        Object.fromEntries(parsed.error.issues.map((i) => [`items.changes.${i.path.join('.')}`, [i.message]])),
      )
    const changes: PreparedItem['changes'] = {}
    for (const [k, to] of Object.entries(parsed.data)) {
      const from = (inst as Record<string, unknown>)[k]
      if (!sameValue(from, to)) changes[k] = { from, to }
    }
    if (!Object.keys(changes).length)
      throw validationFailed({ items: [`The item changes nothing on instrument ${inst.tag}`] })
    const limits = await trx
      .selectFrom('limit_function')
      .select(['id', 'tag', 'window_errors', 'window_warnings', 'sil'])
      .where('primary_instrument_id', '=', inst.id)
      .where('status', '!=', 'retired')
      .execute()
    // the window after: apply inside a savepoint of this transaction that is always rolled back (the row is locked
    // by this transaction, so a transaction of its own would wait on it for ever)
    await sql`SAVEPOINT instrument_window_after`.execute(trx)
    let after: {
      blocked: { tag: string; errors: unknown[] }[]
      rows: { tag: string; window_errors: unknown[]; window_warnings: unknown[] }[]
    }
    try {
      const draft = parsePatch(
        UpdateInstrumentInputSchema,
        Object.fromEntries(Object.entries(changes).map(([k, v]) => [k, v.to])),
      )
      await trx
        .updateTable('instrument')
        .set({
          ...(draft.rangeLow !== undefined ? { range_low: draft.rangeLow } : {}),
          ...(draft.rangeHigh !== undefined ? { range_high: draft.rangeHigh } : {}),
          ...(draft.normalLow !== undefined ? { normal_low: draft.normalLow } : {}),
          ...(draft.normalHigh !== undefined ? { normal_high: draft.normalHigh } : {}),
          ...(draft.designLow !== undefined ? { design_low: draft.designLow } : {}),
          ...(draft.designHigh !== undefined ? { design_high: draft.designHigh } : {}),
          ...(draft.burnout !== undefined ? { burnout: draft.burnout } : {}),
        })
        .where('id', '=', inst.id)
        .execute()
      const blocked = await recomputeWindowsForInstrument(trx, inst.id)
      const rows = await trx
        .selectFrom('limit_function')
        .select(['tag', 'window_errors', 'window_warnings'])
        .where('primary_instrument_id', '=', inst.id)
        .where('status', '!=', 'retired')
        .execute()
      after = { blocked, rows }
    } finally {
      await sql`ROLLBACK TO SAVEPOINT instrument_window_after`.execute(trx)
      await sql`RELEASE SAVEPOINT instrument_window_after`.execute(trx)
    }
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
        warnings: after.rows.flatMap((l) => l.window_warnings.map((e) => ({ ...(e as object), tag: l.tag }))),
      },
    }
  }
  const limit = await lockLimit(trx, input.limitId)
  if (limit.siteId !== siteId) throw validationFailed({ items: [`Limit ${limit.tag} belongs to another site`] })
  const before = limit.operatingWindow
  if (input.kind === 'create') {
    if (limit.status !== 'proposed')
      throw invalidState(`Limit ${limit.tag} is ${limit.status}; only a proposed limit can be created by a change`)
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
    }
  }
  if (limit.status !== 'active')
    throw invalidState(`Limit ${limit.tag} is ${limit.status}; a draft is edited in the register, not through a change`)
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
    }
  }
  const unknown = Object.keys(input.changes).filter((k) => !LIMIT_EDITABLE.has(k))
  if (unknown.length) throw validationFailed({ items: [`These fields cannot be changed: ${unknown.join(', ')}`] })
  const parsed = safeParsePatch(UpdateLimitInputSchema, input.changes)
  if (!parsed.success)
    throw validationFailed(
      Object.fromEntries(parsed.error.issues.map((i) => [`items.changes.${i.path.join('.')}`, [i.message]])),
    )
  const changes: PreparedItem['changes'] = {}
  for (const [k, to] of Object.entries(parsed.data)) {
    const from = (limit as unknown as Record<string, unknown>)[k]
    if (!sameValue(from, to)) changes[k] = { from, to }
  }
  if (!Object.keys(changes).length)
    throw validationFailed({ items: [`The item changes nothing on limit ${limit.tag}`] })
  const draft = CreateLimitInputSchema.parse({
    ...limitSnapshot(limit),
    ...Object.fromEntries(Object.entries(changes).map(([k, v]) => [k, v.to])),
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
  }
}

async function writeItems(deps: AppDeps, trx: Trx, crId: number, siteId: number, inputs: ChangeItemInput[]) {
  const seen = new Set<string>()
  for (const i of inputs) {
    const key = i.kind === 'instrument' ? `i${i.instrumentId}` : `l${i.limitId}`
    if (seen.has(key)) throw validationFailed({ items: ['Each limit or instrument appears once in a request'] })
    seen.add(key)
  }
  await trx.deleteFrom('change_request_item').where('change_request_id', '=', crId).execute()
  const prepared: PreparedItem[] = []
  for (const input of inputs) prepared.push(await prepareItem(deps, trx, siteId, input))
  if (prepared.length) {
    await trx
      .insertInto('change_request_item')
      .values(
        prepared.map((p, position) => ({
          change_request_id: crId,
          position,
          kind: p.kind,
          limit_id: p.limit_id,
          instrument_id: p.instrument_id,
          changes: JSON.stringify(p.changes),
          base_revision: p.base_revision,
          window_before: JSON.stringify(p.window_before),
          window_after: JSON.stringify(p.window_after),
        })),
      )
      .execute()
  }
  return prepared
}

async function refreshHash(trx: Trx, crId: number) {
  const cr = await trx.selectFrom('change_request').selectAll().where('id', '=', crId).executeTakeFirstOrThrow()
  const items = await trx
    .selectFrom('change_request_item')
    .select(['kind', 'limit_id', 'instrument_id', 'changes'])
    .where('change_request_id', '=', crId)
    .orderBy('position')
    .execute()
  const hash = hashOf(cr, items, await listAttachments(trx, ENTITY, crId))
  await trx.updateTable('change_request').set({ content_hash: hash }).where('id', '=', crId).execute()
  return hash
}

async function approvalsRequiredFor(trx: Trx, siteId: number, crId: number): Promise<number> {
  const site = await trx.selectFrom('site').select('policy').where('id', '=', siteId).executeTakeFirstOrThrow()
  const policy = policyOf(site)
  const items = await trx
    .selectFrom('change_request_item')
    .leftJoin('limit_function', 'limit_function.id', 'change_request_item.limit_id')
    .select([
      'change_request_item.kind',
      'change_request_item.instrument_id',
      'change_request_item.changes',
      'limit_function.sil',
    ])
    .where('change_request_id', '=', crId)
    .execute()
  // SIL-rated before or after the change: a modify that gives a limit a SIL is a change to a SIL-rated function
  let sil = items.some((i) => i.sil !== null || (i.changes.sil?.to ?? null) !== null)
  const instrumentIds = items.filter((i) => i.instrument_id).map((i) => i.instrument_id!)
  if (!sil && instrumentIds.length) {
    sil = Boolean(
      await trx
        .selectFrom('limit_function')
        .select('id')
        .where('primary_instrument_id', 'in', instrumentIds)
        .where('sil', 'is not', null)
        .executeTakeFirst(),
    )
  }
  return sil ? policy.approvalsRequiredSil : policy.approvalsRequiredOther
}

// ---------- reading ----------

async function loadRow(db: AppDeps['db'] | Trx, id: number, lock = false) {
  let q = db.selectFrom('change_request').selectAll().where('id', '=', id)
  if (lock) q = q.forUpdate()
  const row = await q.executeTakeFirst()
  if (!row) throw notFound('Change request')
  return row
}

async function editorIds(db: AppDeps['db'] | Trx, id: number): Promise<number[]> {
  return (
    await db.selectFrom('change_request_editor').select('user_id').where('change_request_id', '=', id).execute()
  ).map((r) => r.user_id)
}

/** The subject CASL checks: site, type, proposer and everyone who edited. */
async function subjectOf(
  db: AppDeps['db'] | Trx,
  row: { id: number; site_id: number; proposer_id: number; type: string; status: string },
) {
  return {
    id: row.id,
    siteId: row.site_id,
    proposerId: row.proposer_id,
    editorIds: await editorIds(db, row.id),
    type: row.type,
    status: row.status,
  }
}

export async function getChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  id: number,
  db: AppDeps['db'] | Trx = deps.db,
): Promise<ChangeRequestDto> {
  const row = await loadRow(db, id)
  authorize(ability, 'read', 'ChangeRequest', { siteId: row.site_id })
  const site = await db
    .selectFrom('site')
    .select(['code', 'policy'])
    .where('id', '=', row.site_id)
    .executeTakeFirstOrThrow()
  const proposer = await db
    .selectFrom('app_user')
    .select('display_name')
    .where('id', '=', row.proposer_id)
    .executeTakeFirstOrThrow()
  const items = await db
    .selectFrom('change_request_item')
    .leftJoin('limit_function', 'limit_function.id', 'change_request_item.limit_id')
    .leftJoin('instrument as li', 'li.id', 'limit_function.primary_instrument_id')
    .leftJoin('instrument', 'instrument.id', 'change_request_item.instrument_id')
    .leftJoin('app_user', 'app_user.id', 'change_request_item.implemented_by')
    .selectAll('change_request_item')
    .select([
      'limit_function.tag as limit_tag',
      'limit_function.revision as limit_revision',
      'limit_function.sil as limit_sil',
      'li.unit as limit_unit',
      'instrument.tag as instrument_tag',
      'instrument.revision as instrument_revision',
      'instrument.unit as instrument_unit',
      'app_user.display_name as implementer',
    ])
    .where('change_request_id', '=', id)
    .orderBy('position')
    .execute()
  const sigs = await listSignatures(db, ENTITY, [id])
  const checks = await db
    .selectFrom('change_request_check')
    .leftJoin('app_user', 'app_user.id', 'change_request_check.done_by')
    .select(['item', 'done_at', 'note', 'app_user.display_name'])
    .where('change_request_id', '=', id)
    .execute()
  const atts = await listAttachments(db, ENTITY, id)
  const approvals = sigs.filter((s) => s.meaning === 'approved' && !s.voided_at)
  const expiryDays = policyOf(site).approvalExpiryDays
  // what each signature should cover given the content now (recomputed, not the stored hash): a change after signing shows as a mismatch
  const currentHash = hashOf(row, items, atts)
  const expectedHash = (s: { meaning: string; item_id: number | null; user_id: number }) => {
    if (s.meaning === 'closed') return contentHash({ request: currentHash, pssr: row.pssr })
    if (s.meaning === 'implemented' && s.item_id)
      return contentHash({
        request: currentHash,
        itemId: s.item_id,
        readBack: items.find((i) => i.id === s.item_id)?.read_back ?? null,
      })
    if (s.meaning === 'implemented') {
      const bulk = items
        .filter(
          (i) =>
            i.implemented_by === s.user_id &&
            (i.read_back as { deviceListConfirmed?: boolean } | null)?.deviceListConfirmed,
        )
        .map((i) => i.id)
      return contentHash({ request: currentHash, items: bulk, deviceListConfirmed: true })
    }
    return currentHash
  }
  const itemDtos: ChangeItemDto[] = items.map((i) => {
    const currentRevision = (i.kind === 'instrument' ? i.instrument_revision : i.limit_revision) ?? i.base_revision
    return {
      id: i.id,
      position: i.position,
      kind: i.kind as ChangeItemDto['kind'],
      limitId: i.limit_id,
      instrumentId: i.instrument_id,
      targetTag: (i.kind === 'instrument' ? i.instrument_tag : i.limit_tag) ?? '?',
      unit: (i.kind === 'instrument' ? i.instrument_unit : i.limit_unit) ?? '',
      changes: i.changes,
      baseRevision: i.base_revision,
      currentRevision,
      stale: !i.implemented_at && currentRevision !== i.base_revision,
      windowBefore: i.window_before as ChangeItemDto['windowBefore'],
      windowAfter: i.window_after as ChangeItemDto['windowAfter'],
      silRated: i.limit_sil !== null,
      implementedAt: i.implemented_at?.toISOString() ?? null,
      implementedBy: i.implementer,
      readBack: i.read_back,
      deviceFields: deviceFieldsOf(i.kind, i.changes),
    }
  })
  return {
    id: row.id,
    siteId: row.site_id,
    siteCode: site.code,
    type: row.type as ChangeRequestDto['type'],
    title: row.title,
    rationale: row.rationale,
    hazardReference: row.hazard_reference,
    status: row.status as ChangeRequestDto['status'],
    proposerId: row.proposer_id,
    proposerName: proposer.display_name,
    editorIds: await editorIds(db, id),
    expiresAt: row.expires_at?.toISOString() ?? null,
    approvalsRequired: row.approvals_required,
    approvalsHeld: approvals.length,
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
    pssr: row.pssr,
    items: itemDtos,
    checklist: IMPACT_CHECKLIST.map((c) => {
      const done = checks.find((x) => x.item === c.item)
      return {
        item: c.item,
        label: c.label,
        doneBy: done?.display_name ?? null,
        doneAt: done?.done_at.toISOString() ?? null,
        note: done?.note ?? '',
      }
    }),
    signatures: sigs.map((s) => ({
      id: s.id,
      userId: s.user_id,
      name: s.name,
      meaning: s.meaning,
      at: s.at.toISOString(),
      contentHash: s.content_hash,
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

function deviceFieldsOf(kind: string, changes: Record<string, unknown>): string[] {
  if (kind === 'retire') return []
  const list: readonly string[] = kind === 'instrument' ? DEVICE_FIELDS_INSTRUMENT : DEVICE_FIELDS_LIMIT
  return kind === 'create' ? list.filter((f) => f in changes) : Object.keys(changes).filter((f) => list.includes(f))
}

export interface ChangeListQuery {
  view: 'all' | 'mine' | 'waiting'
  status?: string[]
  type?: string[]
  siteIds: number[]
  page: number
  pageSize: number
  q?: string
}

/** The change list: mine, waiting for me (to approve or implement), or all of my sites. */
export async function listChangeRequests(
  deps: AppDeps,
  user: { id: number; roles: { siteId: number; role: string }[] },
  q: ChangeListQuery,
) {
  let query = deps.db
    .selectFrom('change_request')
    .innerJoin('app_user', 'app_user.id', 'change_request.proposer_id')
    .innerJoin('site', 'site.id', 'change_request.site_id')
    .where('change_request.site_id', 'in', q.siteIds.length ? q.siteIds : [-1])
  if (q.status?.length) query = query.where('change_request.status', 'in', q.status)
  if (q.type?.length) query = query.where('change_request.type', 'in', q.type)
  if (q.q) query = query.where('change_request.title', 'ilike', `%${likeEscape(q.q)}%`)
  if (q.view === 'mine') query = query.where('change_request.proposer_id', '=', user.id)
  if (q.view === 'waiting') query = waitingFilter(query, user)
  const total = (await query.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow()).n
  const rows = await query
    .select([
      'change_request.id',
      'change_request.title',
      'change_request.type',
      'change_request.status',
      'change_request.site_id',
      'site.code as site_code',
      'change_request.approvals_required',
      'change_request.updated_at',
      'change_request.expires_at',
      'change_request.emergency_flagged_at',
      'app_user.display_name as proposer_name',
      (eb) =>
        eb
          .selectFrom('change_request_item')
          .select((e) => e.fn.countAll<number>().as('n'))
          .whereRef('change_request_item.change_request_id', '=', 'change_request.id')
          .as('item_count'),
      (eb) =>
        eb
          .selectFrom('signature')
          .select((e) => e.fn.countAll<number>().as('n'))
          .where('signature.entity_type', '=', ENTITY)
          .whereRef('signature.entity_id', '=', 'change_request.id')
          .where('signature.meaning', '=', 'approved')
          .where('signature.voided_at', 'is', null)
          .as('approvals_held'),
    ])
    .orderBy('change_request.updated_at', 'desc')
    .orderBy('change_request.id', 'desc')
    .limit(q.pageSize)
    .offset((q.page - 1) * q.pageSize)
    .execute()
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
      expiresAt: r.expires_at?.toISOString() ?? null,
      emergencyFlagged: r.emergency_flagged_at !== null,
    })),
  }
}

function waitingFilter<Q extends { where: (...a: any[]) => Q }>(
  query: Q,
  user: { id: number; roles: { siteId: number; role: string }[] },
): Q {
  const approveSites = user.roles.filter((r) => r.role === 'approver').map((r) => r.siteId)
  const implementSites = user.roles.filter((r) => r.role === 'technician').map((r) => r.siteId)
  const emergencySites = user.roles.filter((r) => r.role === 'shift_supervisor').map((r) => r.siteId)
  const closeSites = user.roles.filter((r) => r.role === 'safety_engineer').map((r) => r.siteId)
  return query.where((eb: any) =>
    eb.or([
      eb.and([
        eb('change_request.site_id', 'in', approveSites.length ? approveSites : [-1]),
        eb('change_request.status', 'in', ['submitted', 'implemented']),
        eb('change_request.approved_at', 'is', null),
        eb('change_request.proposer_id', '!=', user.id),
        eb.not(
          eb.exists(
            eb
              .selectFrom('change_request_editor')
              .select('user_id')
              .whereRef('change_request_editor.change_request_id', '=', 'change_request.id')
              .where('user_id', '=', user.id),
          ),
        ),
        eb.not(
          eb.exists(
            eb
              .selectFrom('signature')
              .select('id')
              .where('entity_type', '=', ENTITY)
              .whereRef('signature.entity_id', '=', 'change_request.id')
              .where('signature.user_id', '=', user.id)
              .where('signature.meaning', '=', 'approved')
              .where('signature.voided_at', 'is', null),
          ),
        ),
      ]),
      eb.and([
        eb('change_request.site_id', 'in', implementSites.length ? implementSites : [-1]),
        eb('change_request.status', '=', 'approved'),
      ]),
      eb.and([
        eb('change_request.site_id', 'in', emergencySites.length ? emergencySites : [-1]),
        eb('change_request.status', '=', 'submitted'),
        eb('change_request.type', '=', 'emergency'),
      ]),
      // implemented and approved: waiting for the engineer's pre-start-up safety review and closure
      eb.and([
        eb('change_request.site_id', 'in', closeSites.length ? closeSites : [-1]),
        eb('change_request.status', '=', 'implemented'),
        eb('change_request.approved_at', 'is not', null),
      ]),
    ]),
  )
}

/** The "waiting for me" counter of the navigation. */
export async function countWaiting(
  deps: AppDeps,
  user: { id: number; roles: { siteId: number; role: string }[] },
): Promise<number> {
  const sites = [...new Set(user.roles.map((r) => r.siteId))]
  const q = waitingFilter(
    deps.db.selectFrom('change_request').where('change_request.site_id', 'in', sites.length ? sites : [-1]),
    user,
  )
  return Number((await q.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow()).n)
}

// ---------- writing ----------

function link(deps: AppDeps, id: number) {
  return { url: `${deps.config.appUrl}/changes/${id}`, label: `Open change request #${id}` }
}

async function mailTo(
  deps: AppDeps,
  trx: Trx,
  to: { email: string }[],
  subject: string,
  paragraphs: string[],
  crId: number,
) {
  const seen = new Set<string>()
  const bodies = mailBodies(paragraphs, link(deps, crId))
  const list = to
    .filter((u) => !seen.has(u.email) && seen.add(u.email))
    .map((u) => ({ to: u.email, subject, ...bodies, topic: 'change_request' }))
  await enqueueMail(trx, deps.clock, list)
}

async function proposerOf(trx: Trx, id: number) {
  return trx.selectFrom('app_user').select(['email', 'display_name']).where('id', '=', id).executeTakeFirstOrThrow()
}

export async function createChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: CreateChangeRequestInput,
  opts: { importBatchId?: number; auditBatchId?: string; trx?: Trx } = {},
): Promise<number> {
  authorize(ability, 'create', 'ChangeRequest', { siteId: input.siteId })
  const run = async (trx: Trx) => {
    const now = deps.clock.now()
    const { id } = await trx
      .insertInto('change_request')
      .values({
        site_id: input.siteId,
        type: input.type,
        title: input.title,
        rationale: input.rationale,
        hazard_reference: input.hazardReference,
        expires_at: input.expiresAt ? new Date(input.expiresAt) : null,
        proposer_id: ctx.actorId!,
        content_hash: '0'.repeat(64),
        approvals_required: 1,
        import_batch_id: opts.importBatchId ?? null,
        created_at: now,
        updated_at: now,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await writeItems(deps, trx, id, input.siteId, input.items)
    await trx
      .updateTable('change_request')
      .set({ approvals_required: await approvalsRequiredFor(trx, input.siteId, id) })
      .where('id', '=', id)
      .execute()
    const hash = await refreshHash(trx, id)
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
    const row = await loadRow(trx, id, true)
    authorize(ability, 'update', 'ChangeRequest', { siteId: row.site_id })
    if (!['draft', 'submitted'].includes(row.status))
      throw invalidState(`A ${row.status} change request cannot be edited`)
    if (expectedVersion !== undefined && expectedVersion !== row.version)
      throw conflict('Someone else changed this request meanwhile; reload it')
    const type = input.type ?? row.type
    const expiresAt = input.expiresAt !== undefined ? input.expiresAt : (row.expires_at?.toISOString() ?? null)
    if (type === 'temporary' && !expiresAt)
      throw validationFailed({ expiresAt: ['A temporary change needs an expiry'] })
    await trx
      .updateTable('change_request')
      .set({
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
      .where('id', '=', id)
      .execute()
    if (input.items) await writeItems(deps, trx, id, row.site_id, input.items)
    await trx
      .updateTable('change_request')
      .set({ approvals_required: await approvalsRequiredFor(trx, row.site_id, id) })
      .where('id', '=', id)
      .execute()
    const hash = await refreshHash(trx, id)
    await trx
      .insertInto('change_request_editor')
      .values({ change_request_id: id, user_id: ctx.actorId! })
      .onConflict((oc) => oc.doNothing())
      .execute()
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
    const row = await loadRow(trx, id, true)
    authorize(ability, 'submit', 'ChangeRequest', { siteId: row.site_id })
    if (row.status !== 'draft') throw invalidState(`Only a draft can be submitted; this request is ${row.status}`)
    const items = await trx.selectFrom('change_request_item').select('id').where('change_request_id', '=', id).execute()
    if (!items.length) throw validationFailed({ items: ['Add at least one item'] })
    await trx
      .updateTable('change_request')
      .set({
        status: 'submitted',
        submitted_at: deps.clock.now(),
        updated_at: deps.clock.now(),
        version: row.version + 1,
      })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.submit',
      entityType: ENTITY,
      entityId: id,
      after: { status: 'submitted', contentHash: row.content_hash },
    })
    const approvers = (await findUsersWithRole(trx, row.site_id, ['approver'])).filter((u) => u.id !== row.proposer_id)
    await mailTo(
      deps,
      trx,
      approvers,
      `Change request #${id} waits for your approval: ${row.title}`,
      [
        `${(await proposerOf(trx, row.proposer_id)).display_name} submitted change request #${id} "${row.title}" (${row.type}).`,
        `It needs ${row.approvals_required} approval(s). Review the changes, the operating window before and after, and sign if you agree.`,
      ],
      id,
    )
  })
  return getChangeRequest(deps, ability, id)
}

export async function withdrawChangeRequest(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number) {
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    authorize(ability, 'update', 'ChangeRequest', { siteId: row.site_id })
    if (!['draft', 'submitted'].includes(row.status))
      throw invalidState(`A ${row.status} change request cannot be withdrawn`)
    await trx
      .updateTable('change_request')
      .set({ status: 'withdrawn', updated_at: deps.clock.now(), version: row.version + 1 })
      .where('id', '=', id)
      .execute()
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

/** Checks the approver's right to sign: role at the site, not the proposer, not an editor (403, nothing written). */
async function assertMayApprove(
  deps: AppDeps,
  ability: AppAbility,
  row: { id: number; site_id: number; proposer_id: number; type: string; status: string },
  userId: number,
) {
  const subject = await subjectOf(deps.db, row)
  if (!allows(ability, 'approve', 'ChangeRequest', subject)) {
    if (row.proposer_id === userId)
      throw forbidden('Nobody approves a change they proposed: an independent second person must sign')
    if (subject.editorIds.includes(userId))
      throw forbidden('Nobody approves a change they edited: an independent second person must sign')
    throw forbidden('Only an approver of this site may approve or reject this change')
  }
}

export async function approveChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  password: string,
  comment: string,
) {
  const pre = await loadRow(deps.db, id)
  await assertMayApprove(deps, ability, pre, ctx.actorId!)
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    const emergencyPending = row.type === 'emergency' && row.status === 'implemented' && !row.approved_at
    if (row.status !== 'submitted' && !emergencyPending)
      throw invalidState(`This change request is ${row.status}; it cannot be approved now`)
    const mine = await trx
      .selectFrom('signature')
      .select('id')
      .where('entity_type', '=', ENTITY)
      .where('entity_id', '=', id)
      .where('user_id', '=', signer.id)
      .where('meaning', '=', 'approved')
      .where('voided_at', 'is', null)
      .executeTakeFirst()
    if (mine) throw invalidState('You have already approved this change request')
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'approved',
      contentHash: row.content_hash,
      comment,
    })
    const held = Number(
      (
        await trx
          .selectFrom('signature')
          .select((eb) => eb.fn.countAll<number>().as('n'))
          .where('entity_type', '=', ENTITY)
          .where('entity_id', '=', id)
          .where('meaning', '=', 'approved')
          .where('voided_at', 'is', null)
          .executeTakeFirstOrThrow()
      ).n,
    )
    const complete = held >= row.approvals_required
    const now = deps.clock.now()
    await trx
      .updateTable('change_request')
      .set({
        ...(complete ? { approved_at: now, ...(row.status === 'submitted' ? { status: 'approved' } : {}) } : {}),
        updated_at: now,
        version: row.version + 1,
      })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.approve',
      entityType: ENTITY,
      entityId: id,
      after: {
        signer: signer.name,
        meaning: 'approved',
        contentHash: row.content_hash,
        approvalsHeld: held,
        approvalsRequired: row.approvals_required,
        comment,
      },
    })
    if (complete) {
      await mailTo(
        deps,
        trx,
        [await proposerOf(trx, row.proposer_id)],
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
  return getChangeRequest(deps, ability, id)
}

export async function rejectChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  password: string,
  comment: string,
) {
  const pre = await loadRow(deps.db, id)
  await assertMayApprove(deps, ability, pre, ctx.actorId!)
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    if (row.status !== 'submitted')
      throw invalidState(`This change request is ${row.status}; it cannot be rejected now`)
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'rejected',
      contentHash: row.content_hash,
      comment,
    })
    await trx
      .updateTable('change_request')
      .set({ status: 'rejected', updated_at: deps.clock.now(), version: row.version + 1 })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.reject',
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, meaning: 'rejected', contentHash: row.content_hash, comment },
    })
    await mailTo(
      deps,
      trx,
      [await proposerOf(trx, row.proposer_id)],
      `Change request #${id} rejected: ${row.title}`,
      [`${signer.name} rejected change request #${id} "${row.title}".`, `Reason: ${comment}`],
      id,
    )
  })
  return getChangeRequest(deps, ability, id)
}

/** Compares the technician's read-back with the approved values; every device field must be read back equal. */
function checkReadBack(
  item: { kind: string; changes: Record<string, { from: unknown; to: unknown }> },
  readBack: Record<string, unknown>,
) {
  const fields = deviceFieldsOf(item.kind, item.changes)
  const errors: Record<string, string[]> = {}
  for (const f of fields) {
    if (!(f in readBack)) errors[`readBack.${f}`] = [`Read ${f} back from the device`]
    else if (!sameValue(readBack[f], item.changes[f].to))
      errors[`readBack.${f}`] = [
        `The device shows ${JSON.stringify(readBack[f])}; the approved value is ${JSON.stringify(item.changes[f].to)}`,
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
  const row =
    item.kind === 'instrument'
      ? await trx
          .selectFrom('instrument')
          .select(['tag', 'revision'])
          .where('id', '=', item.instrument_id!)
          .forUpdate()
          .executeTakeFirstOrThrow()
      : await trx
          .selectFrom('limit_function')
          .select(['tag', 'revision'])
          .where('id', '=', item.limit_id!)
          .forUpdate()
          .executeTakeFirstOrThrow()
  if (row.revision !== item.base_revision) {
    throw conflict(
      `${item.kind === 'instrument' ? 'Instrument' : 'Limit'} ${row.tag} changed since this request was written (revision ${item.base_revision} → ${row.revision}); revise the request`,
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
  const to = Object.fromEntries(Object.entries(item.changes).map(([k, v]) => [k, v.to]))
  if (item.kind === 'instrument') {
    const inst = await lockInstrument(trx, item.instrument_id!)
    if (inst.revision !== item.base_revision)
      throw conflict(
        `Instrument ${inst.tag} changed since this request was written (revision ${item.base_revision} → ${inst.revision}); revise the request`,
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
      `Limit ${limit.tag} changed since this request was written (revision ${item.base_revision} → ${limit.revision}); revise the request`,
    )
  if (item.kind === 'create') {
    if (limit.status !== 'proposed') throw invalidState(`Limit ${limit.tag} is already ${limit.status}`)
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
 * Implements one item (read-back required, equal to the approved value) or, for an import baseline of new limits,
 * all items at once with one device-list confirmation. Each is an electronic signature.
 */
export async function implementChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: { itemId?: number; readBack?: Record<string, unknown>; allItems?: true; password: string; comment: string },
) {
  const pre = await loadRow(deps.db, id)
  authorize(ability, 'implement', 'ChangeRequest', await subjectOf(deps.db, pre))
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: ENTITY,
    entityId: id,
  })
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    const site = await trx.selectFrom('site').select('policy').where('id', '=', row.site_id).executeTakeFirstOrThrow()
    const now = deps.clock.now()
    const emergencyFirst = row.type === 'emergency' && row.status === 'submitted'
    if (row.status !== 'approved' && !emergencyFirst)
      throw invalidState(`This change request is ${row.status}; only an approved request is implemented`)
    if (emergencyFirst) {
      const supervisor = await trx
        .selectFrom('role_assignment')
        .select('role')
        .where('user_id', '=', signer.id)
        .where('site_id', '=', row.site_id)
        .where('role', '=', 'shift_supervisor')
        .executeTakeFirst()
      if (!supervisor)
        throw forbidden('An emergency change is implemented before approval only by a shift supervisor of the site')
    }
    if (
      row.status === 'approved' &&
      row.approved_at &&
      now.getTime() > row.approved_at.getTime() + policyOf(site).approvalExpiryDays * DAY
    ) {
      throw invalidState(
        'The approval has expired (not implemented within the policy time); the request must be approved again',
      )
    }
    const items = await trx
      .selectFrom('change_request_item')
      .selectAll()
      .where('change_request_id', '=', id)
      .orderBy('position')
      .execute()
    const targets = input.allItems ? items.filter((i) => !i.implemented_at) : items.filter((i) => i.id === input.itemId)
    if (!targets.length)
      throw input.allItems ? invalidState('Every item is implemented already') : notFound('Change request item')
    if (input.allItems && targets.some((i) => i.kind !== 'create'))
      throw invalidState(
        'Only a baseline of new limits is implemented in bulk; implement changes item by item with their read-back',
      )
    // nothing half-applied: while any item still to implement stands on a row that changed since, none is applied
    for (const item of items.filter((i) => !i.implemented_at)) await assertNotStale(trx, item)
    for (const item of targets) {
      if (item.implemented_at) throw invalidState('This item is implemented already')
      if (!input.allItems) checkReadBack(item, input.readBack ?? {})
      await applyItem(deps, trx, ctx, id, item)
      const readBack = input.allItems ? { deviceListConfirmed: true } : (input.readBack ?? {})
      await trx
        .updateTable('change_request_item')
        .set({ implemented_at: now, implemented_by: signer.id, read_back: JSON.stringify(readBack) })
        .where('id', '=', item.id)
        .execute()
      if (!input.allItems) {
        await insertSignature(trx, deps.clock, {
          entityType: ENTITY,
          entityId: id,
          itemId: item.id,
          userId: signer.id,
          name: signer.name,
          meaning: 'implemented',
          contentHash: contentHash({ request: row.content_hash, itemId: item.id, readBack }),
          comment: input.comment,
        })
      }
    }
    if (input.allItems) {
      await insertSignature(trx, deps.clock, {
        entityType: ENTITY,
        entityId: id,
        userId: signer.id,
        name: signer.name,
        meaning: 'implemented',
        contentHash: contentHash({
          request: row.content_hash,
          items: targets.map((t) => t.id),
          deviceListConfirmed: true,
        }),
        comment: input.comment,
      })
    }
    const remaining = items.length - items.filter((i) => i.implemented_at).length - targets.length
    if (remaining === 0)
      await trx
        .updateTable('change_request')
        .set({ status: 'implemented', implemented_at: now })
        .where('id', '=', id)
        .execute()
    await trx
      .updateTable('change_request')
      .set({ updated_at: now, version: row.version + 1 })
      .where('id', '=', id)
      .execute()
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
      const approvers = await trx
        .selectFrom('signature')
        .innerJoin('app_user', 'app_user.id', 'signature.user_id')
        .select('app_user.email')
        .where('entity_type', '=', ENTITY)
        .where('entity_id', '=', id)
        .where('meaning', '=', 'approved')
        .where('voided_at', 'is', null)
        .execute()
      await mailTo(
        deps,
        trx,
        [await proposerOf(trx, row.proposer_id), ...approvers],
        `Change request #${id} implemented: ${row.title}`,
        [
          `${signer.name} implemented change request #${id} "${row.title}" on the device and read the values back.`,
          'The safety engineer closes it after the pre-start-up safety review.',
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
  const pre = await loadRow(deps.db, id)
  authorize(ability, 'close', 'ChangeRequest', { siteId: pre.site_id })
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    if (row.status !== 'implemented')
      throw invalidState(`Only an implemented change request is closed; this one is ${row.status}`)
    if (!row.approved_at) throw invalidState('The emergency change is not approved yet; it cannot be closed')
    const done = await trx
      .selectFrom('change_request_check')
      .select('item')
      .where('change_request_id', '=', id)
      .execute()
    const missing = IMPACT_CHECKLIST.filter((c) => !done.some((d) => d.item === c.item))
    if (missing.length)
      throw validationFailed(
        { checklist: missing.map((m) => `Tick "${m.label}" first`) },
        'The impact checklist is not complete',
      )
    const now = deps.clock.now()
    const record = { ...pssr, reviewedAt: now.toISOString(), reviewedBy: signer.name }
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning: 'closed',
      contentHash: contentHash({ request: row.content_hash, pssr: record }),
    })
    await trx
      .updateTable('change_request')
      .set({
        status: 'closed',
        closed_at: now,
        pssr: JSON.stringify(record),
        updated_at: now,
        version: row.version + 1,
      })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.close',
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, meaning: 'closed', pssr: record, contentHash: row.content_hash },
    })
  })
  return getChangeRequest(deps, ability, id)
}

export async function tickChecklist(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  item: ChecklistItem,
  done: boolean,
  note: string,
) {
  if (!IMPACT_CHECKLIST.some((c) => c.item === item)) throw notFound('Checklist item')
  await deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    authorize(ability, 'update', 'ChangeRequest', { siteId: row.site_id })
    if (['closed', 'withdrawn', 'rejected'].includes(row.status))
      throw invalidState(`A ${row.status} change request cannot be edited`)
    if (done) {
      await trx
        .insertInto('change_request_check')
        .values({ change_request_id: id, item, done_by: ctx.actorId!, done_at: deps.clock.now(), note })
        .onConflict((oc) =>
          oc
            .columns(['change_request_id', 'item'])
            .doUpdateSet({ done_by: ctx.actorId!, done_at: deps.clock.now(), note }),
        )
        .execute()
    } else {
      await trx
        .deleteFrom('change_request_check')
        .where('change_request_id', '=', id)
        .where('item', '=', item)
        .execute()
    }
    await appendAudit(trx, deps.clock, ctx, {
      action: done ? 'change_request.check' : 'change_request.uncheck',
      entityType: ENTITY,
      entityId: id,
      after: { item, note },
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
      rationale: `Imported from ${p.fileName} (import batch ${p.importBatchId}). Approving and implementing this request puts the imported limits in service.`,
      items: p.limitIds.map((limitId) => ({ kind: 'create' as const, limitId })),
    },
    { importBatchId: p.importBatchId, auditBatchId: p.auditBatchId, trx },
  )
}

export { ENTITY as CHANGE_REQUEST_ENTITY }
export type { Clock }

/**
 * Attaches a file (PDF, PNG, JPEG, checked by content) while the request is a draft or submitted without approvals;
 * the attachments are part of what the signatures cover, so the content hash is recomputed.
 */
export async function attachToChangeRequest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  file: Express.Multer.File | undefined,
) {
  return deps.db.transaction().execute(async (trx) => {
    const row = await loadRow(trx, id, true)
    authorize(ability, 'update', 'ChangeRequest', { siteId: row.site_id })
    const approvals = await trx
      .selectFrom('signature')
      .select('id')
      .where('entity_type', '=', ENTITY)
      .where('entity_id', '=', id)
      .where('voided_at', 'is', null)
      .executeTakeFirst()
    if (!['draft', 'submitted'].includes(row.status) || approvals)
      throw invalidState('Attach files before anyone signs the request: what is signed must not change afterwards')
    const a = await storeAttachment(trx, deps.clock, file, { entityType: ENTITY, entityId: id, userId: ctx.actorId! })
    const hash = await refreshHash(trx, id)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'change_request.attach',
      entityType: ENTITY,
      entityId: id,
      after: {
        attachmentId: a.id,
        fileName: a.file_name,
        contentType: a.content_type,
        sizeBytes: a.size_bytes,
        sha256: a.sha256,
        contentHash: hash,
      },
    })
    return a
  })
}
