import { TZDate } from '@date-fns/tz'
import type { Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { computeDueDates } from '../../../shared/domain/due-dates.ts'
import { MissingInputError, OutOfRangeError, UnitConversionError } from '../../../shared/domain/errors.ts'
import { engineeringFromSignal } from '../../../shared/domain/test-signal.ts'
import { judgeTripTest, toleranceInEu } from '../../../shared/domain/trip-test-result.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import type { SitePolicy } from '../../../shared/schemas/sites.ts'
import type { TripTestDto, TripTestInput } from '../../../shared/schemas/trip-tests.ts'
import { allows, authorize } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database, TripTestTable } from '../../db/schema.ts'
import type { Selectable } from 'kysely'
import { AppError, forbidden, invalidState, notFound, validationFailed } from '../../errors.ts'
import { listAttachments } from '../attachments/attachments.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { enqueueMail, mailBodies } from '../mail/mail.outbox.ts'
import { refreshProtectionState } from '../register/protection.ts'
import { toInstrument } from '../register/register.mappers.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import { contentHash, insertSignature, listSignatures } from '../signatures/signatures.ts'
import { findUsersWithRole } from '../users/users.repository.ts'

type Trx = Transaction<Database>
type Db = AppDeps['db'] | Trx
const ENTITY = 'TripTest'

/** The site's grace days for a limit: its own, else 0 for a code-set interval, else the policy's share of the interval. */
export function graceDaysFor(
  l: { test_grace_days: number | null; code_set_interval: boolean; test_interval_months: number },
  policy: SitePolicy,
): number {
  if (l.test_grace_days !== null) return l.test_grace_days
  if (l.code_set_interval) return 0
  return Math.min(policy.testGraceMaxDays, Math.floor((l.test_interval_months * 730 * policy.testGraceFraction) / 24))
}

/** The calendar date of an instant in a time zone. */
export function localDate(at: Date, timeZone: string): string {
  const d = new TZDate(at.getTime(), timeZone)
  return `${d.getFullYear()}-${String(d.getMonth() + 1).padStart(2, '0')}-${String(d.getDate()).padStart(2, '0')}`
}

/** Recomputes and stores a limit's due date and test status from its signed tests (DOMAIN.md §5). */
export async function refreshTestSchedule(trx: Db, limitId: number, now: Date) {
  const r = await computeSchedule(trx, limitId, now)
  await trx
    .updateTable('limit_function')
    .set({ test_status: r.status, test_due_date: r.dueDate, last_full_pass: r.lastFullPass })
    .where('id', '=', limitId)
    .execute()
  return r
}

/** Due date, status and late tests of a limit from its signed tests (nothing written). */
export async function computeSchedule(trx: Db, limitId: number, now: Date) {
  const l = await trx
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select([
      'limit_function.id',
      'test_interval_months',
      'test_grace_days',
      'code_set_interval',
      'site.time_zone',
      'site.policy',
    ])
    .where('limit_function.id', '=', limitId)
    .executeTakeFirstOrThrow()
  const tests = await trx
    .selectFrom('trip_test')
    .select(['id', 'performed_at', 'kind', 'passed'])
    .where('limit_id', '=', limitId)
    .where('status', '!=', 'recorded')
    .execute()
  return computeDueDates({
    testIntervalMonths: l.test_interval_months,
    testGraceDays: graceDaysFor(l, policyOf(l)),
    codeSetInterval: l.code_set_interval,
    timeZone: l.time_zone,
    now,
    tests: tests.map((t) => ({
      id: t.id,
      performedAt: t.performed_at,
      kind: t.kind as 'full' | 'partial',
      passed: t.passed,
    })),
  })
}

function hashRecord(r: Selectable<TripTestTable>) {
  const { id: _i, status: _s, content_hash: _c, created_at: _ca, updated_at: _u, ...content } = r
  return contentHash({ ...content, performed_at: r.performed_at.toISOString() })
}

async function loadContext(db: Db, limitId: number) {
  const limit = await db
    .selectFrom('limit_function')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.site_id',
      'limit_function.status',
      'limit_function.direction',
      'limit_function.setpoint',
      'limit_function.revision',
      'limit_function.primary_instrument_id',
      'limit_function.sil',
      'limit_function.required_response_time_sec',
      'site.time_zone',
      'site.policy',
    ])
    .where('limit_function.id', '=', limitId)
    .executeTakeFirst()
  if (!limit) throw validationFailed({ limitId: ['The limit does not exist'] })
  const inst = toInstrument(
    await db
      .selectFrom('instrument')
      .selectAll()
      .where('id', '=', limit.primary_instrument_id)
      .executeTakeFirstOrThrow(),
  )
  return { limit, inst, policy: policyOf(limit) }
}

/** Computes the stored columns of a record from its input: conversions, tolerance, results. */
async function evaluate(db: Db, input: TripTestInput) {
  const { limit, inst, policy } = await loadContext(db, input.limitId)
  if (limit.status !== 'active')
    throw invalidState(`Limit ${limit.tag} is ${limit.status}; only an active limit is trip-tested`)
  const performedOn = localDate(new Date(input.performedAt), limit.time_zone)
  if (input.calibratorDueDate && input.calibratorDueDate < performedOn) {
    throw validationFailed(
      {
        calibratorDueDate: [
          `The calibrator was past its calibration due date (${input.calibratorDueDate}) on ${performedOn}: it cannot be used`,
        ],
      },
      'A calibrator past its due date cannot be used',
    )
  }
  if (input.method === 'reference_gauge' && inst.signal.kind !== 'switch')
    throw validationFailed({
      method: ['A reference gauge test is for switches; inject a signal for a transmitter or sensor'],
    })
  let asFound = input.noTrip ? null : input.asFound
  if (input.asFoundSignal) {
    try {
      asFound = engineeringFromSignal(
        { unit: inst.unit, rangeLow: inst.rangeLow, rangeHigh: inst.rangeHigh, signal: inst.signal as never },
        input.asFoundSignal.value,
        {
          signalUnit: input.asFoundSignal.unit,
          coldJunctionC: input.coldJunctionC,
          mode: input.sourceMode ?? 'mv_source',
        },
      ).value
    } catch (err) {
      if (err instanceof MissingInputError) throw validationFailed({ coldJunctionC: [err.message] })
      if (err instanceof OutOfRangeError || err instanceof UnitConversionError)
        throw new AppError(422, ErrorCode.UNPROCESSABLE, err.message, { fields: { asFoundSignal: [err.message] } })
      throw err
    }
  }
  const tolerance = input.tolerance ?? policy.defaultTolerancePercentSpan
  const toleranceUnit = input.tolerance === null ? 'percent_span' : input.toleranceUnit
  const tolEu = toleranceInEu(tolerance, toleranceUnit, inst.rangeLow, inst.rangeHigh)
  const setpoint = Number(limit.setpoint)
  const j = judgeTripTest({
    direction: limit.direction as 'high' | 'low',
    setpoint,
    tolerance: tolEu,
    asFound,
    asLeft: input.asLeft,
    finalElementOk: input.finalElementOk,
    responseTimeSec: input.responseTimeSec,
    requiredResponseTimeSec:
      limit.required_response_time_sec === null ? null : Number(limit.required_response_time_sec),
  })
  const reasons = [...j.reasons]
  if (
    input.method === 'setpoint_lowered' &&
    input.setpointRestoredReadBack !== null &&
    Math.abs(input.setpointRestoredReadBack - setpoint) > 1e-9
  ) {
    reasons.push(`The restored setpoint reads ${input.setpointRestoredReadBack}; it must be ${setpoint}`)
  }
  return {
    limit,
    inst,
    policy,
    columns: {
      limit_id: limit.id,
      site_id: limit.site_id,
      limit_revision: limit.revision,
      kind: input.kind,
      method: input.method,
      injection_point: input.injectionPoint,
      source_mode: input.sourceMode,
      cold_junction_c: input.coldJunctionC,
      procedure_ref: input.procedureRef,
      device_serial: input.deviceSerial,
      calibrator_id: input.calibratorId,
      calibrator_due_date: input.calibratorDueDate,
      work_order: input.workOrder,
      bypass_id: input.bypassId,
      performed_at: new Date(input.performedAt),
      setpoint,
      tolerance,
      tolerance_unit: toleranceUnit,
      tolerance_eu: tolEu,
      as_found: asFound,
      as_found_signal: input.asFoundSignal ? JSON.stringify(input.asFoundSignal) : null,
      as_found_result: j.asFoundResult,
      as_left: input.asLeft,
      as_left_result: j.asLeftResult,
      reset_value: input.resetValue,
      latch_held: input.latchHeld,
      reset_refused_while_active: input.resetRefusedWhileActive,
      reset_accepted_after_return: input.resetAcceptedAfterReturn,
      final_element_ok: input.finalElementOk,
      response_time_sec: input.responseTimeSec,
      setpoint_restored_read_back: input.setpointRestoredReadBack,
      passed: reasons.length === 0,
      fail_reasons: JSON.stringify(reasons),
      notes: input.notes,
    },
  }
}

export async function getTripTest(
  deps: AppDeps,
  ability: AppAbility,
  id: number,
  db: Db = deps.db,
): Promise<TripTestDto> {
  const r = await db
    .selectFrom('trip_test')
    .innerJoin('limit_function', 'limit_function.id', 'trip_test.limit_id')
    .innerJoin('app_user', 'app_user.id', 'trip_test.recorded_by')
    .innerJoin('instrument', 'instrument.id', 'limit_function.primary_instrument_id')
    .selectAll('trip_test')
    .select([
      'limit_function.tag',
      'limit_function.sil',
      'limit_function.required_response_time_sec',
      'app_user.display_name',
      'instrument.unit',
    ])
    .where('trip_test.id', '=', id)
    .executeTakeFirst()
  if (!r) throw notFound('Trip test')
  authorize(ability, 'read', 'TripTest', { siteId: r.site_id })
  const site = await db.selectFrom('site').select('policy').where('id', '=', r.site_id).executeTakeFirstOrThrow()
  const policy = policyOf(site)
  const sigs = await listSignatures(db, ENTITY, [id])
  const n = (v: string | null) => (v === null ? null : Number(v))
  return {
    id: r.id,
    limitId: r.limit_id,
    limitTag: r.tag,
    siteId: r.site_id,
    limitRevision: r.limit_revision,
    kind: r.kind as 'full',
    method: r.method as TripTestDto['method'],
    injectionPoint: r.injection_point,
    sourceMode: r.source_mode,
    coldJunctionC: n(r.cold_junction_c),
    procedureRef: r.procedure_ref,
    deviceSerial: r.device_serial,
    calibratorId: r.calibrator_id,
    calibratorDueDate: r.calibrator_due_date,
    workOrder: r.work_order,
    bypassId: r.bypass_id,
    performedAt: r.performed_at.toISOString(),
    setpoint: Number(r.setpoint),
    tolerance: Number(r.tolerance),
    toleranceUnit: r.tolerance_unit as 'eu',
    toleranceEu: Number(r.tolerance_eu),
    unit: r.unit,
    asFound: n(r.as_found),
    asFoundSignal: r.as_found_signal,
    asFoundResult: r.as_found_result as TripTestDto['asFoundResult'],
    asLeft: n(r.as_left),
    asLeftResult: r.as_left_result as 'out',
    resetValue: n(r.reset_value),
    latchHeld: r.latch_held,
    resetRefusedWhileActive: r.reset_refused_while_active,
    resetAcceptedAfterReturn: r.reset_accepted_after_return,
    finalElementOk: r.final_element_ok,
    responseTimeSec: n(r.response_time_sec),
    requiredResponseTimeSec: n(r.required_response_time_sec),
    setpointRestoredReadBack: n(r.setpoint_restored_read_back),
    passed: r.passed,
    failReasons: r.fail_reasons,
    notes: r.notes,
    status: r.status as TripTestDto['status'],
    witnessRequired: witnessRequired(policy, r.sil),
    contentHash: r.content_hash,
    recordedBy: r.display_name,
    signatures: sigs
      .filter((s) => !s.voided_at)
      .map((s) => ({
        id: s.id,
        userId: s.user_id,
        name: s.name,
        meaning: s.meaning,
        at: s.at.toISOString(),
        contentHash: s.content_hash,
        matchesContent: s.content_hash === r.content_hash,
      })),
    attachments: (await listAttachments(db, ENTITY, id)).map((a) => ({
      id: a.id,
      fileName: a.file_name,
      contentType: a.content_type,
      sizeBytes: a.size_bytes,
    })),
    createdAt: r.created_at.toISOString(),
  }
}

function witnessRequired(policy: SitePolicy, sil: number | null) {
  return policy.witnessRequiredFor === 'all' || (policy.witnessRequiredFor === 'sil_only' && sil !== null)
}

export async function createTripTest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: TripTestInput,
): Promise<TripTestDto> {
  const { limit } = await loadContext(deps.db, input.limitId)
  authorize(ability, 'record', 'TripTest', { siteId: limit.site_id })
  if (new Date(input.performedAt).getTime() > deps.clock.now().getTime() + 5 * 60_000)
    throw validationFailed({ performedAt: ['A test cannot be recorded in the future'] })
  const id = await deps.db.transaction().execute(async (trx) => {
    const ev = await evaluate(trx, input)
    await checkBypass(trx, input)
    const now = deps.clock.now()
    const row = await trx
      .insertInto('trip_test')
      .values({
        ...ev.columns,
        content_hash: '0'.repeat(64),
        recorded_by: ctx.actorId!,
        created_at: now,
        updated_at: now,
      })
      .returningAll()
      .executeTakeFirstOrThrow()
    const hash = hashRecord(row)
    await trx.updateTable('trip_test').set({ content_hash: hash }).where('id', '=', row.id).execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'trip_test.record',
      entityType: ENTITY,
      entityId: row.id,
      after: {
        ...input,
        passed: row.passed,
        asFoundResult: row.as_found_result,
        asLeftResult: row.as_left_result,
        contentHash: hash,
      },
    })
    return row.id
  })
  return getTripTest(deps, ability, id)
}

async function checkBypass(trx: Trx, input: TripTestInput) {
  if (!input.bypassId) return
  const b = await trx.selectFrom('bypass').select(['limit_id']).where('id', '=', input.bypassId).executeTakeFirst()
  if (!b || b.limit_id !== input.limitId)
    throw validationFailed({ bypassId: ['The bypass does not belong to this limit'] })
}

/** Edits a record before its performer signs it; afterwards it is locked. */
export async function updateTripTest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  input: TripTestInput,
): Promise<TripTestDto> {
  await deps.db.transaction().execute(async (trx) => {
    const before = await trx.selectFrom('trip_test').selectAll().where('id', '=', id).forUpdate().executeTakeFirst()
    if (!before) throw notFound('Trip test')
    authorize(ability, 'record', 'TripTest', { siteId: before.site_id })
    if (before.recorded_by !== ctx.actorId) throw forbidden('Only the technician who recorded the test edits it')
    if (before.status !== 'recorded') throw invalidState('A signed test record is locked; record a new test instead')
    if (input.limitId !== before.limit_id) throw validationFailed({ limitId: ['A record stays with its limit'] })
    const ev = await evaluate(trx, input)
    await checkBypass(trx, input)
    const row = await trx
      .updateTable('trip_test')
      .set({ ...ev.columns, updated_at: deps.clock.now() })
      .where('id', '=', id)
      .returningAll()
      .executeTakeFirstOrThrow()
    const hash = hashRecord(row)
    await trx.updateTable('trip_test').set({ content_hash: hash }).where('id', '=', id).execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'trip_test.update',
      entityType: ENTITY,
      entityId: id,
      before: { contentHash: before.content_hash },
      after: { ...input, contentHash: hash },
    })
  })
  return getTripTest(deps, ability, id)
}

/**
 * Signs a record: `performed` by the technician who recorded it (locks it and applies the result: a failed test
 * degrades the limit, a passing full test clears it), `witnessed` by someone else, `accepted` by operations.
 */
export async function signTripTest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  meaning: 'performed' | 'witnessed' | 'accepted',
  password: string,
  comment: string,
): Promise<TripTestDto> {
  const pre = await deps.db.selectFrom('trip_test').selectAll().where('id', '=', id).executeTakeFirst()
  if (!pre) throw notFound('Trip test')
  const action = meaning === 'performed' ? 'record' : meaning === 'witnessed' ? 'witness' : 'accept'
  authorize(ability, action, 'TripTest', { siteId: pre.site_id })
  if (meaning === 'performed' && pre.recorded_by !== ctx.actorId)
    throw forbidden('The technician who performed and recorded the test signs it as performer')
  if (meaning === 'witnessed' && pre.recorded_by === ctx.actorId) throw forbidden('Nobody witnesses their own test')
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await trx.selectFrom('trip_test').selectAll().where('id', '=', id).forUpdate().executeTakeFirstOrThrow()
    const sigs = (await listSignatures(trx, ENTITY, [id])).filter((s) => !s.voided_at)
    if (sigs.some((s) => s.meaning === meaning)) throw invalidState(`The record is already signed as ${meaning}`)
    if (meaning !== 'performed' && !sigs.some((s) => s.meaning === 'performed'))
      throw invalidState('The performer signs first')
    if (meaning === 'performed' && row.status !== 'recorded') throw invalidState('The record is already signed')
    await insertSignature(trx, deps.clock, {
      entityType: ENTITY,
      entityId: id,
      userId: signer.id,
      name: signer.name,
      meaning,
      contentHash: row.content_hash,
      comment,
    })
    const now = deps.clock.now()
    const ctxInfo = await loadContext(trx, row.limit_id)
    const held = new Set([...sigs.map((s) => s.meaning), meaning])
    const complete =
      held.has('performed') &&
      held.has('accepted') &&
      (!witnessRequired(ctxInfo.policy, ctxInfo.limit.sil) || held.has('witnessed'))
    await trx
      .updateTable('trip_test')
      .set({ status: complete ? 'completed' : 'signed', updated_at: now })
      .where('id', '=', id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: `trip_test.${meaning}`,
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, meaning, contentHash: row.content_hash, comment },
    })
    if (meaning === 'performed') await applyResult(deps, trx, ctx, row, ctxInfo.limit.tag)
  })
  return getTripTest(deps, ability, id)
}

async function applyResult(deps: AppDeps, trx: Trx, ctx: AuditContext, row: Selectable<TripTestTable>, tag: string) {
  const now = deps.clock.now()
  const open = await trx
    .selectFrom('limit_degradation')
    .select(['id'])
    .where('limit_id', '=', row.limit_id)
    .where('cleared_at', 'is', null)
    .forUpdate()
    .executeTakeFirst()
  if (!row.passed) {
    if (!open) {
      await trx
        .insertInto('limit_degradation')
        .values({ limit_id: row.limit_id, test_id: row.id, opened_at: now, reasons: JSON.stringify(row.fail_reasons) })
        .execute()
      await appendAudit(trx, deps.clock, ctx, {
        action: 'limit.degraded',
        entityType: 'Limit',
        entityId: row.limit_id,
        after: { testId: row.id, reasons: row.fail_reasons },
      })
    }
    const to = await findUsersWithRole(trx, row.site_id, ['safety_engineer', 'shift_supervisor'])
    const bodies = mailBodies(
      [
        `The trip test #${row.id} of ${tag} failed: ${row.fail_reasons.join('; ')}.`,
        'The limit is degraded until a full retest passes. A shift supervisor records compensating measures and a repair deadline now.',
      ],
      { url: `${deps.config.appUrl}/tests/${row.id}`, label: `Open trip test #${row.id}` },
    )
    await enqueueMail(
      trx,
      deps.clock,
      to.map((u) => ({ to: u.email, subject: `DEGRADED: ${tag} failed its trip test`, ...bodies, topic: 'trip_test' })),
    )
  } else if (open && row.kind === 'full') {
    await trx
      .updateTable('limit_degradation')
      .set({ cleared_at: now, cleared_by_test_id: row.id })
      .where('id', '=', open.id)
      .execute()
    await appendAudit(trx, deps.clock, ctx, {
      action: 'limit.degradation_cleared',
      entityType: 'Limit',
      entityId: row.limit_id,
      after: { testId: row.id },
    })
  }
  await refreshProtectionState(trx, row.limit_id)
  await refreshTestSchedule(trx, row.limit_id, now)
}

/** A shift supervisor records and signs the compensating measures and repair deadline of a degraded limit. */
export async function signDegradationMeasures(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  limitId: number,
  input: { compensatingMeasures: string[]; repairDeadline: string; password: string },
) {
  const limit = await deps.db
    .selectFrom('limit_function')
    .select(['site_id', 'tag'])
    .where('id', '=', limitId)
    .executeTakeFirst()
  if (!limit) throw notFound('Limit')
  authorize(ability, 'read', 'Limit', { siteId: limit.site_id })
  const isSupervisor =
    allows(ability, 'accept', 'TripTest', { siteId: limit.site_id }) &&
    (await deps.db
      .selectFrom('role_assignment')
      .select('role')
      .where('user_id', '=', ctx.actorId!)
      .where('site_id', '=', limit.site_id)
      .where('role', '=', 'shift_supervisor')
      .executeTakeFirst())
  if (!isSupervisor)
    throw forbidden('A shift supervisor of this site records the compensating measures of a degraded limit')
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: 'Limit',
    entityId: limitId,
  })
  await deps.db.transaction().execute(async (trx) => {
    const open = await trx
      .selectFrom('limit_degradation')
      .selectAll()
      .where('limit_id', '=', limitId)
      .where('cleared_at', 'is', null)
      .forUpdate()
      .executeTakeFirst()
    if (!open) throw invalidState(`${limit.tag} is not degraded`)
    const content = {
      degradationId: open.id,
      compensatingMeasures: input.compensatingMeasures,
      repairDeadline: input.repairDeadline,
    }
    await trx
      .updateTable('limit_degradation')
      .set({
        compensating_measures: JSON.stringify(input.compensatingMeasures),
        repair_deadline: input.repairDeadline,
        measures_signed_by: signer.id,
        measures_signed_at: deps.clock.now(),
      })
      .where('id', '=', open.id)
      .execute()
    await insertSignature(trx, deps.clock, {
      entityType: 'LimitDegradation',
      entityId: open.id,
      userId: signer.id,
      name: signer.name,
      meaning: 'authorized',
      contentHash: contentHash(content),
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'limit.degradation_measures',
      entityType: 'Limit',
      entityId: limitId,
      after: { ...content, signer: signer.name },
    })
  })
  return getDegradation(deps, ability, limitId)
}

export async function getDegradation(deps: AppDeps, ability: AppAbility, limitId: number) {
  const limit = await deps.db
    .selectFrom('limit_function')
    .select('site_id')
    .where('id', '=', limitId)
    .executeTakeFirst()
  if (!limit) throw notFound('Limit')
  authorize(ability, 'read', 'Limit', { siteId: limit.site_id })
  const rows = await deps.db
    .selectFrom('limit_degradation')
    .leftJoin('app_user', 'app_user.id', 'limit_degradation.measures_signed_by')
    .innerJoin('limit_function', 'limit_function.id', 'limit_degradation.limit_id')
    .selectAll('limit_degradation')
    .select(['app_user.display_name', 'limit_function.site_id'])
    .where('limit_id', '=', limitId)
    .orderBy('opened_at', 'desc')
    .execute()
  return {
    items: rows.map((r) => ({
      id: r.id,
      testId: r.test_id,
      openedAt: r.opened_at.toISOString(),
      reasons: r.reasons,
      compensatingMeasures: r.compensating_measures,
      repairDeadline: r.repair_deadline,
      measuresSignedBy: r.display_name,
      measuresSignedAt: r.measures_signed_at?.toISOString() ?? null,
      clearedAt: r.cleared_at?.toISOString() ?? null,
      clearedByTestId: r.cleared_by_test_id,
    })),
  }
}

export interface TripTestListQuery {
  siteIds: number[]
  limitId?: number
  passed?: boolean
  page: number
  pageSize: number
}

export async function listTripTests(deps: AppDeps, q: TripTestListQuery) {
  let base = deps.db
    .selectFrom('trip_test')
    .innerJoin('limit_function', 'limit_function.id', 'trip_test.limit_id')
    .innerJoin('app_user', 'app_user.id', 'trip_test.recorded_by')
    .where('trip_test.site_id', 'in', q.siteIds.length ? q.siteIds : [-1])
  if (q.limitId) base = base.where('trip_test.limit_id', '=', q.limitId)
  if (q.passed !== undefined) base = base.where('trip_test.passed', '=', q.passed)
  const total = (await base.select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow()).n
  const rows = await base
    .select([
      'trip_test.id',
      'trip_test.limit_id',
      'trip_test.site_id',
      'limit_function.tag',
      'trip_test.kind',
      'trip_test.method',
      'trip_test.performed_at',
      'trip_test.as_found',
      'trip_test.as_found_result',
      'trip_test.as_left',
      'trip_test.as_left_result',
      'trip_test.passed',
      'trip_test.status',
      'trip_test.setpoint',
      'trip_test.tolerance_eu',
      'app_user.display_name',
    ])
    .orderBy('trip_test.performed_at', 'desc')
    .orderBy('trip_test.id', 'desc')
    .limit(q.pageSize)
    .offset((q.page - 1) * q.pageSize)
    .execute()
  return {
    total,
    items: rows.map((r) => ({
      id: r.id,
      limitId: r.limit_id,
      siteId: r.site_id,
      limitTag: r.tag,
      kind: r.kind,
      method: r.method,
      performedAt: r.performed_at.toISOString(),
      asFound: r.as_found === null ? null : Number(r.as_found),
      asFoundResult: r.as_found_result,
      asLeft: r.as_left === null ? null : Number(r.as_left),
      asLeftResult: r.as_left_result,
      passed: r.passed,
      status: r.status,
      setpoint: Number(r.setpoint),
      toleranceEu: Number(r.tolerance_eu),
      recordedBy: r.display_name,
    })),
  }
}

/** The schedule: active limits with their due date and status; `late` lists limits with a test done inside the grace. */
export async function schedule(
  deps: AppDeps,
  q: { siteIds: number[]; areaIds?: number[]; status?: string[]; late?: boolean; limit: number },
) {
  let base = deps.db
    .selectFrom('limit_function')
    .innerJoin('area', 'area.id', 'limit_function.area_id')
    .innerJoin('site', 'site.id', 'limit_function.site_id')
    .where('limit_function.status', '=', 'active')
    .where('limit_function.site_id', 'in', q.siteIds.length ? q.siteIds : [-1])
  if (q.areaIds?.length) base = base.where('limit_function.area_id', 'in', q.areaIds)
  if (q.status?.length) base = base.where('limit_function.test_status', 'in', q.status)
  const rows = await base
    .select([
      'limit_function.id',
      'limit_function.tag',
      'limit_function.description',
      'limit_function.site_id',
      'site.code as site_code',
      'area.name as area_name',
      'limit_function.test_status',
      'limit_function.test_due_date',
      'limit_function.last_full_pass',
      'limit_function.test_interval_months',
      'limit_function.protection_state',
      'limit_function.sil',
    ])
    .orderBy('limit_function.test_due_date', (ob) => ob.asc().nullsFirst())
    .orderBy('limit_function.tag')
    .limit(q.limit)
    .execute()
  let items = rows.map((r) => ({
    limitId: r.id,
    tag: r.tag,
    description: r.description,
    siteId: r.site_id,
    siteCode: r.site_code,
    areaName: r.area_name,
    testStatus: r.test_status,
    dueDate: r.test_due_date,
    lastFullPass: r.last_full_pass,
    testIntervalMonths: r.test_interval_months,
    protectionState: r.protection_state,
    sil: r.sil,
    lateTests: 0,
  }))
  if (q.late) {
    const now = deps.clock.now()
    const withLate = []
    for (const it of items) {
      const r = await computeSchedule(deps.db, it.limitId, now)
      if (r.lateTests.some((t) => t.withinGrace))
        withLate.push({ ...it, lateTests: r.lateTests.filter((t) => t.withinGrace).length })
    }
    items = withLate
  }
  let countBase = deps.db
    .selectFrom('limit_function')
    .where('status', '=', 'active')
    .where('site_id', 'in', q.siteIds.length ? q.siteIds : [-1])
  if (q.areaIds?.length) countBase = countBase.where('area_id', 'in', q.areaIds)
  const counts = await countBase
    .select(['test_status', (eb) => eb.fn.countAll<number>().as('n')])
    .groupBy('test_status')
    .execute()
  return { items, total: items.length, counts: Object.fromEntries(counts.map((c) => [c.test_status, Number(c.n)])) }
}

export { ENTITY as TRIP_TEST_ENTITY }
export type { Clock }
