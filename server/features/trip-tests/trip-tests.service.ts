import { TZDate } from '@date-fns/tz'
import type { Selectable, Transaction } from 'kysely'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import {
  computeDueDates,
  type DueDateResult,
  type DueDateTest,
  intervalHours,
} from '../../../shared/domain/due-dates.ts'
import { MissingInputError, OutOfRangeError, UnitConversionError } from '../../../shared/domain/errors.ts'
import {
  checkDeferralRequest,
  checkRepairDeadline,
  deferralActions,
  deferralApproverRole,
  type DeferralStatus,
  deadlineApprovalStanding,
  degradationActions,
  functionMttrHours,
  graceDaysFor,
  isComplete,
  MEANING_OF,
  type RuleActor,
  type TripTestAction,
  tripTestActions,
  type TripTestRuleRecord,
  witnessRequired,
} from '../../../shared/domain/rules/trip-tests.ts'
import { tripTestableVerdict } from '../../../shared/domain/rules/limits.ts'
import { compareToTarget, sifPfd, subsystemPfd } from '../../../shared/domain/sif-reliability.ts'
import { engineeringFromSignal } from '../../../shared/domain/test-signal.ts'
import { judgeTripTest, judgeVotedChannels, toleranceInEu, VOTING } from '../../../shared/domain/trip-test-result.ts'
import { ErrorCode } from '../../../shared/errors.ts'
import type { Limit, Subsystem } from '../../../shared/schemas/register.ts'
import type { SitePolicy } from '../../../shared/schemas/sites.ts'
import type {
  DegradationResponse,
  DeferralRisk,
  OpenDeferral,
  OverdueRepair,
  SignatureMeaning,
  TestDeferralDto,
  TestDeferralInput,
  TestDeferralList,
  TestDeferralListQuery,
  TripTestDto,
  TripTestInput,
  TripTestList,
  ScheduleResponse,
} from '../../../shared/schemas/trip-tests.ts'
import { TripTestPrecautionsSchema } from '../../../shared/schemas/trip-tests.ts'
import { allows, authorize, readableRow } from '../../authorize.ts'
import type { Clock } from '../../clock.ts'
import type { AppDeps } from '../../deps.ts'
import type { Database, TripTestTable } from '../../db/schema.ts'
import { AppError, enforce, invalidState, notFound, validationFailed } from '../../errors.ts'
import { attachmentFacts, listAttachments } from '../attachments/attachments.ts'
import { type AuditContext, appendAudit } from '../audit/audit.repository.ts'
import { mailNotice, recordLink } from '../mail/mail.outbox.ts'
import { refreshProtectionState } from '../register/protection-state-column.ts'
import { toInstrument } from '../register/register.mappers.ts'
import { verifySignaturePassword } from '../session/session.service.ts'
import { policyOf } from '../sites/sites.service.ts'
import { contentHash, listSignatures, signAs, signatureDto } from '../signatures/signatures.ts'
import { findUsersWithRole, recipientsOf } from '../users/users.repository.ts'
import * as repo from './trip-tests.repository.ts'
import { batchesOf } from '../../db/batches.ts'

type Trx = Transaction<Database>
type Db = AppDeps['db'] | Trx
const ENTITY = 'TripTest'
const DEFERRAL = 'TestDeferral'

/** The calendar date of an instant in a time zone. */
export function localDate(at: Date, timeZone: string): string {
  const d = new TZDate(at.getTime(), timeZone)
  return `${d.getFullYear()}-${String(d.getMonth() + 1).padStart(2, '0')}-${String(d.getDate()).padStart(2, '0')}`
}

/** The actor of a rule book: the signed-in user, their ability and their roles at the site. */
async function actorAt(db: Db, ability: AppAbility, ctx: AuditContext, siteId: number): Promise<RuleActor> {
  const id = ctx.actorId ?? 0
  return { id, ability, roles: await repo.rolesAt(db, id, siteId) }
}

/** Recomputes and stores a limit's due date and test status from its signed tests (docs/domain/due-dates.md). */
export async function refreshTestSchedule(trx: Db, limitId: number, now: Date) {
  const r = await computeSchedule(trx, limitId, now)
  await repo.updateLimitSchedule(trx, limitId, r)
  return r
}

/** Recomputes and stores the due dates and test statuses of many limits (a history import), 500 at a time. */
export async function refreshTestSchedules(trx: Db, limitIds: number[], now: Date) {
  for (const batch of batchesOf(limitIds, 500)) {
    const found = await computeSchedules(trx, batch, now)
    await repo.updateLimitSchedules(
      trx,
      [...found].map(([limitId, r]) => ({ limitId, ...r })),
    )
  }
}

/**
 * Due date, status and late tests of a limit from its signed whole-function tests, the demands credited as proof
 * tests and approved deferrals.
 */
export async function computeSchedule(db: Db, limitId: number, now: Date) {
  const r = (await computeSchedules(db, [limitId], now)).get(limitId)
  if (!r) throw notFound('Limit')
  return r
}

/**
 * The schedules of many limits from four queries (the limits with their sites, their signed whole-function tests,
 * the demands credited as proof tests, their approved deferrals); limits that do not exist are left out.
 */
export async function computeSchedules(db: Db, limitIds: number[], now: Date) {
  const [limits, signed, credited, deferrals] = await Promise.all([
    repo.scheduleInputs(db, limitIds),
    repo.signedFunctionTestsOf(db, limitIds),
    repo.creditedDemandsOf(db, limitIds),
    repo.approvedDeferralsOf(db, limitIds),
  ])
  const testsOf = new Map<number, DueDateTest[]>()
  const add = (limitId: number, t: DueDateTest) => {
    const list = testsOf.get(limitId)
    if (list) list.push(t)
    else testsOf.set(limitId, [t])
  }
  for (const t of signed) add(t.limit_id, { id: t.id, performedAt: t.performed_at, kind: t.kind, passed: t.passed })
  // a demand credited as a proof test counts as a passing full test on its day (docs/demands.md)
  for (const d of credited)
    add(d.limit_id, { id: `demand:${d.id}`, performedAt: d.occurred_at, kind: 'full', passed: true })
  const out = new Map<number, DueDateResult>()
  // one parse of each site's policy per batch, not one per limit
  const policies = new Map<string, ReturnType<typeof policyOf>>()
  const policyFor = (l: (typeof limits)[number]) => {
    const key = JSON.stringify(l.policy)
    let p = policies.get(key)
    if (!p) policies.set(key, (p = policyOf(l)))
    return p
  }
  for (const l of limits) {
    const input = {
      testIntervalMonths: l.test_interval_months,
      testGraceDays: graceDaysFor(
        {
          testGraceDays: l.test_grace_days,
          codeSetInterval: l.code_set_interval,
          testIntervalMonths: l.test_interval_months,
          sil: l.sil,
        },
        policyFor(l),
      ),
      codeSetInterval: l.code_set_interval,
      commissionedOn: l.commissioned_at,
      timeZone: l.time_zone,
      now,
      tests: testsOf.get(l.id) ?? [],
    }
    const plain = computeDueDates(input)
    // an approved deferral applies while the due date from the tests is still the one it deferred (newest first)
    const deferral = deferrals.find((d) => d.limit_id === l.id && d.original_due_date === plain.dueDate)
    out.set(
      l.id,
      deferral
        ? computeDueDates({
            ...input,
            deferral: { originalDueDate: deferral.original_due_date, newDueDate: deferral.new_due_date },
          })
        : plain,
    )
  }
  return out
}

function hashRecord(r: Selectable<TripTestTable>) {
  const { id: _i, status: _s, content_hash: _c, created_at: _ca, updated_at: _u, ...content } = r
  return contentHash({ ...content, performed_at: r.performed_at.toISOString() })
}

async function loadContext(db: Db, limitId: number) {
  const limit = await repo.findLimitForTest(db, limitId)
  if (!limit) throw validationFailed({ limitId: ['The limit does not exist'] })
  const inst = toInstrument(await repo.findInstrument(db, limit.primary_instrument_id))
  return { limit, inst, policy: policyOf(limit) }
}

/** Computes the stored columns of a record from its input: conversions, tolerance, channels, results. */
async function evaluate(db: Db, input: TripTestInput) {
  const { limit, inst, policy } = await loadContext(db, input.limitId)
  enforce(tripTestableVerdict(limit))
  const performedOn = localDate(new Date(input.performedAt), limit.time_zone)
  if (input.calibratorDueDate && input.calibratorDueDate < performedOn) {
    throw validationFailed(
      {
        calibratorDueDate: [
          `The calibrator was past its calibration due date (${input.calibratorDueDate}) on ${performedOn}: ` +
            'it cannot be used',
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
        { unit: inst.unit, rangeLow: inst.rangeLow, rangeHigh: inst.rangeHigh, signal: inst.signal },
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
  const direction = limit.direction === 'low' ? 'low' : 'high'
  const reasons: string[] = []

  // a voted function tested channel by channel: each channel judged, the function's result from the vote
  let channels: TripTestDto['channels'] = []
  let voting: TripTestDto['voting'] = null
  let asLeft = input.asLeft
  if (input.channels.length) {
    const known = await repo.findChannelInstruments(db, limit.id)
    const sensor = limit.subsystems.find((x) => x.role === 'sensor')
    const architecture = sensor?.architecture ?? (known.length === 2 ? '1oo2' : known.length === 3 ? '2oo3' : '1oo1')
    const expected = VOTING[architecture].n
    const ids = new Set(known.map((k) => k.id))
    if (input.channels.some((c) => !ids.has(c.instrumentId)) || input.channels.length !== expected)
      throw validationFailed({
        channels: [
          `${limit.tag} votes ${architecture}: enter one result for each of its ${expected} channel instruments ` +
            `(${known.map((k) => k.tag).join(', ')})`,
        ],
      })
    const j = judgeVotedChannels({
      direction,
      setpoint,
      tolerance: tolEu,
      architecture,
      channels: input.channels.map((c) => ({ asFound: c.noTrip ? null : c.asFound, asLeft: c.asLeft })),
    })
    channels = input.channels.map((c, i) => ({
      instrumentId: c.instrumentId,
      tag: known.find((k) => k.id === c.instrumentId)?.tag ?? String(c.instrumentId),
      asFound: c.noTrip ? null : c.asFound,
      asLeft: c.asLeft,
      ...j.channels[i],
    }))
    voting = { architecture, required: j.required, tripped: j.tripped, acted: j.acted }
    asFound = j.votedAsFound
    asLeft = j.votedAsLeft
    for (const c of channels)
      if (!c.passed)
        reasons.push(
          `Channel ${c.tag}: ${
            c.asFoundResult === 'no_trip'
              ? 'did not trip'
              : c.asFoundResult === 'out_dangerous'
                ? `tripped at ${c.asFound}, beyond ${setpoint} ± ${tolEu} on the dangerous side`
                : `left at ${c.asLeft ?? c.asFound}, outside ${setpoint} ± ${tolEu}`
          }`,
        )
    if (!j.acted) reasons.push(`The vote was not reached: ${j.tripped} of ${j.required} required channels tripped`)
  }

  const tripPoint = input.scope === 'function' || input.scope === 'sensor' || input.scope === 'logic_solver'
  let asFoundResult: TripTestTable['as_found_result'] = 'not_applicable'
  let asLeftResult: TripTestTable['as_left_result'] = 'not_applicable'
  if (tripPoint) {
    const j = judgeTripTest({
      direction,
      setpoint,
      tolerance: tolEu,
      asFound,
      asLeft: input.channels.length ? (asLeft ?? asFound) : asLeft,
      finalElementOk: input.finalElementOk,
      responseTimeSec: input.responseTimeSec,
      requiredResponseTimeSec:
        limit.required_response_time_sec === null ? null : Number(limit.required_response_time_sec),
    })
    asFoundResult = j.asFoundResult
    asLeftResult = j.asLeftResult
    // with channels, the channel lines already say what failed; keep the function lines that add to them
    for (const r of j.reasons) if (!(input.channels.length && /trip|As left|as-left/i.test(r))) reasons.push(r)
  } else {
    if (input.finalElementOk === false) reasons.push('The final element did not act')
    const required = limit.required_response_time_sec === null ? null : Number(limit.required_response_time_sec)
    if (input.scope === 'final_element' && input.closingTimeSec !== null && required !== null)
      if (input.closingTimeSec > required)
        reasons.push(`The valve closed in ${input.closingTimeSec} s; at most ${required} s is required`)
    if (input.scope === 'valve_leak' && input.leakTestPassed === false) reasons.push('The valve failed its leak test')
  }
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
      scope: input.scope,
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
      as_found_result: asFoundResult,
      as_left: input.channels.length ? asLeft : input.asLeft,
      as_left_result: asLeftResult,
      channels: JSON.stringify(channels),
      voting: voting ? JSON.stringify(voting) : null,
      reset_value: input.resetValue,
      latch_held: input.latchHeld,
      reset_refused_while_active: input.resetRefusedWhileActive,
      reset_accepted_after_return: input.resetAcceptedAfterReturn,
      final_element_ok: input.finalElementOk,
      response_time_sec: input.responseTimeSec,
      closing_time_sec: input.closingTimeSec,
      leak_test_passed: input.leakTestPassed,
      stroke_percent: input.strokePercent,
      setpoint_restored_read_back: input.setpointRestoredReadBack,
      precautions: JSON.stringify(input.precautions ?? {}),
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
  ctx?: AuditContext,
): Promise<TripTestDto> {
  const r = readableRow(await repo.findTripTestDetail(db, id), ability, 'TripTest', 'Trip test')
  const policy = policyOf(r)
  const sigs = await listSignatures(db, ENTITY, [id])
  // the rule book's answers for the caller: the record's page builds its signing buttons from them
  const actor: RuleActor = ctx ? await actorAt(db, ability, ctx, r.site_id) : { id: 0, ability, roles: [] }
  const actions = tripTestActions(
    ruleRecord(
      r,
      r.sil,
      sigs.filter((x) => !x.voided_at),
    ),
    actor,
    policy,
    deps.clock.now(),
  )
  const n = (v: string | null) => (v === null ? null : Number(v))
  return {
    id: r.id,
    limitId: r.limit_id,
    limitTag: r.tag,
    siteId: r.site_id,
    limitRevision: r.limit_revision,
    kind: r.kind,
    scope: r.scope,
    method: r.method,
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
    toleranceUnit: r.tolerance_unit,
    toleranceEu: Number(r.tolerance_eu),
    unit: r.unit,
    asFound: n(r.as_found),
    asFoundSignal: r.as_found_signal,
    asFoundResult: r.as_found_result,
    asLeft: n(r.as_left),
    asLeftResult: r.as_left_result,
    channels: r.channels,
    voting: r.voting,
    resetValue: n(r.reset_value),
    latchHeld: r.latch_held,
    resetRefusedWhileActive: r.reset_refused_while_active,
    resetAcceptedAfterReturn: r.reset_accepted_after_return,
    finalElementOk: r.final_element_ok,
    responseTimeSec: n(r.response_time_sec),
    requiredResponseTimeSec: n(r.required_response_time_sec),
    closingTimeSec: n(r.closing_time_sec),
    leakTestPassed: r.leak_test_passed,
    strokePercent: n(r.stroke_percent),
    setpointRestoredReadBack: n(r.setpoint_restored_read_back),
    precautions: TripTestPrecautionsSchema.safeParse(r.precautions).data ?? null,
    passed: r.passed,
    failReasons: r.fail_reasons,
    notes: r.notes,
    status: r.status,
    witnessRequired: witnessRequired(policy, r.sil),
    contentHash: r.content_hash,
    recordedById: r.recorded_by,
    recordedBy: r.display_name,
    source: r.source,
    testerName: r.tester_name,
    importBatchId: r.import_batch_id,
    signatures: sigs
      .filter((s) => !s.voided_at)
      .map((s) => ({ ...signatureDto(s), matchesContent: s.content_hash === r.content_hash })),
    attachments: (await listAttachments(db, ENTITY, id)).map((a) => ({
      id: a.id,
      fileName: a.file_name,
      contentType: a.content_type,
      sizeBytes: a.size_bytes,
    })),
    createdAt: r.created_at.toISOString(),
    actions,
  }
}

/** The rule book's answers for a stored record (signatures read inside the caller's transaction). */
/** What the rule book needs of a test record. */
function ruleRecord(
  row: Pick<Selectable<TripTestTable>, 'site_id' | 'status' | 'recorded_by' | 'source'>,
  sil: number | null,
  sigs: { meaning: string; user_id: number }[],
): TripTestRuleRecord {
  return {
    siteId: row.site_id,
    status: row.status,
    recordedById: row.recorded_by,
    sil,
    signatures: sigs.map((x) => ({ meaning: x.meaning, userId: x.user_id })),
    imported: row.source === 'imported',
  }
}

async function verdictsFor(db: Db, row: Selectable<TripTestTable>, actor: RuleActor, now: Date) {
  const ctx = await loadContext(db, row.limit_id)
  const sigs = (await listSignatures(db, ENTITY, [row.id])).filter((x) => !x.voided_at)
  const verdicts = tripTestActions(ruleRecord(row, ctx.limit.sil, sigs), actor, ctx.policy, now)
  return { verdicts, sigs, ctx }
}

export async function createTripTest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: TripTestInput,
): Promise<TripTestDto> {
  const { limit } = await loadContext(deps.db, input.limitId)
  // another site's limit answers as a missing one (docs/security.md#authorization)
  if (!allows(ability, 'read', 'Limit', { siteId: limit.site_id }))
    throw validationFailed({ limitId: ['The limit does not exist'] })
  authorize(ability, 'record', 'TripTest', { siteId: limit.site_id })
  if (new Date(input.performedAt).getTime() > deps.clock.now().getTime() + 5 * 60_000)
    throw validationFailed({ performedAt: ['A test cannot be recorded in the future'] })
  const id = await deps.db.transaction().execute(async (trx) => {
    const ev = await evaluate(trx, input)
    await checkBypass(trx, input)
    const now = deps.clock.now()
    const row = await repo.insertTripTest(trx, {
      ...ev.columns,
      content_hash: '0'.repeat(64),
      recorded_by: ctx.actorId!,
      created_at: now,
      updated_at: now,
    })
    const hash = hashRecord(row)
    await repo.updateTripTest(trx, row.id, { content_hash: hash })
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
  return getTripTest(deps, ability, id, deps.db, ctx)
}

async function checkBypass(trx: Trx, input: TripTestInput) {
  if (!input.bypassId) return
  const b = await repo.findBypassLimit(trx, input.bypassId)
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
    const before = readableRow(await repo.lockTripTest(trx, id), ability, 'TripTest', 'Trip test')
    const actor = await actorAt(trx, ability, ctx, before.site_id)
    enforce((await verdictsFor(trx, before, actor, deps.clock.now())).verdicts.edit)
    if (input.limitId !== before.limit_id) throw validationFailed({ limitId: ['A record stays with its limit'] })
    const ev = await evaluate(trx, input)
    await checkBypass(trx, input)
    const row = await repo.updateTripTest(trx, id, { ...ev.columns, updated_at: deps.clock.now() })
    const hash = hashRecord(row)
    await repo.updateTripTest(trx, id, { content_hash: hash })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'trip_test.update',
      entityType: ENTITY,
      entityId: id,
      before: { contentHash: before.content_hash },
      after: { ...input, contentHash: hash },
    })
  })
  return getTripTest(deps, ability, id, deps.db, ctx)
}

const SIGN_ACTION: Record<SignatureMeaning, Exclude<TripTestAction, 'edit' | 'attach'>> = {
  performed: 'signPerformed',
  witnessed: 'signWitnessed',
  returned_to_service: 'signReturnedToService',
  accepted: 'signAccepted',
}

/**
 * Signs a record: `performed` by the technician who recorded it (locks it and applies the result: a failed test
 * degrades the limit, a passing full test clears it), `witnessed` by someone else, `returned_to_service` by a
 * technician once forces, jumpers and bypasses are removed, `accepted` by operations (docs/trip-tests.md#who-signs).
 */
export async function signTripTest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  meaning: SignatureMeaning,
  password: string,
  comment: string,
): Promise<TripTestDto> {
  const action = SIGN_ACTION[meaning]
  const pre = readableRow(await repo.findTripTest(deps.db, id), ability, 'TripTest', 'Trip test')
  const actor = await actorAt(deps.db, ability, ctx, pre.site_id)
  // role and separation of duties first (403, nothing written); the state again inside the transaction
  const early = (await verdictsFor(deps.db, pre, actor, deps.clock.now())).verdicts[action]
  if (!early.allowed && early.status === 403) enforce(early)
  const signer = await verifySignaturePassword(deps, ctx.actorId!, password, ctx, { entityType: ENTITY, entityId: id })
  await deps.db.transaction().execute(async (trx) => {
    const row = await repo.lockTripTest(trx, id)
    if (!row) throw notFound('Trip test')
    const now = deps.clock.now()
    const { verdicts, sigs, ctx: info } = await verdictsFor(trx, row, actor, now)
    enforce(verdicts[action])
    await signAs(trx, deps.clock, signer, {
      entityType: ENTITY,
      entityId: id,
      meaning: MEANING_OF[action],
      contentHash: row.content_hash,
      comment,
    })
    const held = new Set([...sigs.map((x) => x.meaning), meaning])
    await repo.updateTripTest(trx, id, {
      status: isComplete(held, info.policy, info.limit.sil) ? 'completed' : 'signed',
      updated_at: now,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: `trip_test.${meaning}`,
      entityType: ENTITY,
      entityId: id,
      after: { signer: signer.name, meaning, contentHash: row.content_hash, comment },
    })
    if (meaning === 'performed') await applyResult(deps, trx, ctx, row, info.limit)
  })
  return getTripTest(deps, ability, id, deps.db, ctx)
}

async function applyResult(
  deps: AppDeps,
  trx: Trx,
  ctx: AuditContext,
  row: Selectable<TripTestTable>,
  limit: { tag: string; subsystems: Subsystem[] },
) {
  const now = deps.clock.now()
  const open = await repo.lockOpenDegradation(trx, row.limit_id)
  if (!row.passed) {
    if (!open) {
      const mttr = functionMttrHours(limit.subsystems)
      await repo.insertDegradation(trx, {
        limit_id: row.limit_id,
        test_id: row.id,
        opened_at: now,
        reasons: JSON.stringify(row.fail_reasons),
        mttr_hours: mttr,
      })
      await appendAudit(trx, deps.clock, ctx, {
        action: 'limit.degraded',
        entityType: 'Limit',
        entityId: row.limit_id,
        after: { testId: row.id, reasons: row.fail_reasons },
      })
    }
    const to = await recipientsOf(trx, row.site_id, 'tripTestFailed')
    await mailNotice(trx, deps.clock, to, {
      subject: `DEGRADED: ${limit.tag} failed its trip test`,
      topic: 'trip_test',
      paragraphs: [
        `The trip test #${row.id} of ${limit.tag} failed: ${row.fail_reasons.join('; ')}.`,
        'The limit is degraded until a full retest passes. A shift supervisor records compensating measures and ' +
          'a repair deadline now. Continued operation on compensating measures is allowed only for a limited time.',
      ],
      link: recordLink(deps.config.appUrl, 'tests', 'trip test', row.id),
    })
  } else if (open && row.kind === 'full' && row.scope === 'function') {
    await repo.updateDegradation(trx, open.id, { cleared_at: now, cleared_by_test_id: row.id })
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

/**
 * Degraded limits whose signed repair deadline has passed (the deadline day is over in the site's own zone), for home
 * and the shift handover (docs/trip-tests.md#degraded-limits). Continued operation on compensating measures was
 * accepted only until then.
 */
export async function overdueRepairs(db: Db, siteIds: number[], now: Date): Promise<OverdueRepair[]> {
  const zones = await repo.siteZones(db, siteIds)
  const perSite = await Promise.all(
    zones.map((z) => repo.passedRepairDeadlines(db, [z.id], localDate(now, z.time_zone))),
  )
  return perSite.flat().map((r) => ({
    degradationId: r.id,
    limitId: r.limit_id,
    tag: r.tag,
    siteId: r.site_id,
    areaId: r.area_id,
    repairDeadline: r.repair_deadline!,
    escalated: r.escalated_at !== null,
  }))
}

/**
 * Deferrals open at some sites now: requested and waiting for a decision, or approved and still in force (the due date
 * from the tests is still the one they deferred). For the shift handover (docs/trip-tests.md#test-deferrals).
 */
export async function openDeferrals(db: Db, siteIds: number[], now: Date): Promise<OpenDeferral[]> {
  const rows = await repo.deferralsBetween(db, siteIds, new Date(0), now)
  return rows
    .sort((x, y) => x.new_due_date.localeCompare(y.new_due_date) || x.id - y.id)
    .flatMap((d) =>
      d.status === 'requested' || (d.status === 'approved' && d.test_due_date === d.new_due_date)
        ? [
            {
              id: d.id,
              limitId: d.limit_id,
              tag: d.tag,
              areaId: d.area_id,
              status: d.status,
              originalDueDate: d.original_due_date,
              newDueDate: d.new_due_date,
            },
          ]
        : [],
    )
}

/** The end of a calendar day in a zone (the moment the next day starts). */
function endOfDay(date: string, timeZone: string): Date {
  const [y, m, d] = date.split('-').map(Number)
  return new Date(new TZDate(y, m - 1, d + 1, timeZone).getTime())
}

/**
 * A shift supervisor records and signs the compensating measures and repair deadline of a degraded limit. A deadline
 * beyond the MTTR assumed for the function is accepted with a warning and waits for the plant manager's signature.
 */
export async function signDegradationMeasures(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  limitId: number,
  input: { compensatingMeasures: string[]; repairDeadline: string; password: string },
) {
  const limit = readableRow(await repo.findLimitForTest(deps.db, limitId), ability, 'Limit')
  const actor = await actorAt(deps.db, ability, ctx, limit.site_id)
  const now = deps.clock.now()
  const probe = degradationActions(
    {
      siteId: limit.site_id,
      cleared: false,
      openedAt: now,
      measuresSigned: false,
      deadlineBeyondMttr: false,
      deadlineApproved: false,
    },
    actor,
    null,
    now,
  ).signMeasures
  enforce(probe)
  if (input.repairDeadline < localDate(now, limit.time_zone))
    throw validationFailed({ repairDeadline: ['The repair deadline cannot lie in the past'] })
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: 'Limit',
    entityId: limitId,
  })
  await deps.db.transaction().execute(async (trx) => {
    const d = await lockDegradationOf(trx, limit)
    const mttr = d.mttr_hours === null ? null : Number(d.mttr_hours)
    const check = checkRepairDeadline(d.opened_at, endOfDay(input.repairDeadline, limit.time_zone), mttr)
    const content = {
      degradationId: d.id,
      compensatingMeasures: input.compensatingMeasures,
      repairDeadline: input.repairDeadline,
    }
    await repo.updateDegradation(trx, d.id, {
      compensating_measures: JSON.stringify(input.compensatingMeasures),
      repair_deadline: input.repairDeadline,
      measures_signed_by: signer.id,
      measures_signed_at: deps.clock.now(),
      deadline_beyond_mttr: check.beyondMttr,
      deadline_approved_by: null,
      deadline_approved_at: null,
      escalated_at: null,
    })
    await signAs(trx, deps.clock, signer, {
      entityType: 'LimitDegradation',
      entityId: d.id,
      meaning: 'authorized',
      contentHash: contentHash(content),
    })
    if (check.beyondMttr) {
      const managers = await recipientsOf(trx, limit.site_id, 'repairDeadlineBeyondMttr')
      await mailNotice(trx, deps.clock, managers, {
        subject: `Approve: repair deadline of ${limit.tag} beyond its MTTR`,
        topic: 'trip_test',
        paragraphs: [
          `${limit.tag} is degraded. The repair deadline ${input.repairDeadline} lies beyond the ${mttr} h MTTR ` +
            'assumed for this function.',
          'Approve the longer deadline with your signature, or ask for a shorter one. Continued operation on ' +
            'compensating measures is allowed only for a limited time.',
        ],
        link: recordLink(deps.config.appUrl, 'tests', 'trip test', d.test_id),
      })
    }
    await appendAudit(trx, deps.clock, ctx, {
      action: 'limit.degradation_measures',
      entityType: 'Limit',
      entityId: limitId,
      after: { ...content, signer: signer.name, beyondMttr: check.beyondMttr, mttrHours: mttr },
    })
  })
  return getDegradation(deps, ability, limitId, ctx)
}

/** The plant manager signs a repair deadline that lies beyond the function's assumed MTTR. */
export async function approveRepairDeadline(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  limitId: number,
  input: { password: string; comment: string },
) {
  const limit = readableRow(await repo.findLimitForTest(deps.db, limitId), ability, 'Limit')
  const actor = await actorAt(deps.db, ability, ctx, limit.site_id)
  enforce(deadlineApprovalStanding(actor))
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: 'Limit',
    entityId: limitId,
  })
  await deps.db.transaction().execute(async (trx) => {
    const d = await lockDegradationOf(trx, limit)
    const now = deps.clock.now()
    enforce(degradationActions(degradationRule(d, limit.site_id), actor, null, now).approveDeadline)
    await repo.updateDegradation(trx, d.id, { deadline_approved_by: signer.id, deadline_approved_at: now })
    const content = { degradationId: d.id, repairDeadline: d.repair_deadline, mttrHours: d.mttr_hours }
    await signAs(trx, deps.clock, signer, {
      entityType: 'LimitDegradation',
      entityId: d.id,
      meaning: 'approved',
      contentHash: contentHash(content),
      comment: input.comment,
    })
    await appendAudit(trx, deps.clock, ctx, {
      action: 'limit.repair_deadline_approved',
      entityType: 'Limit',
      entityId: limitId,
      after: { ...content, signer: signer.name, comment: input.comment },
    })
  })
  return getDegradation(deps, ability, limitId, ctx)
}

/** The open degradation of a limit, locked for the signed action on it; 409 when the limit is not degraded. */
async function lockDegradationOf(trx: Trx, limit: { id: number; tag: string }) {
  const open = await repo.lockOpenDegradation(trx, limit.id)
  if (!open) throw invalidState(`${limit.tag} is not degraded`)
  return open
}

function degradationRule(
  d: { cleared_at: Date | null; opened_at: Date; measures_signed_at: Date | null } & {
    deadline_beyond_mttr: boolean
    deadline_approved_at: Date | null
  },
  siteId: number,
) {
  return {
    siteId,
    cleared: d.cleared_at !== null,
    openedAt: d.opened_at,
    measuresSigned: d.measures_signed_at !== null,
    deadlineBeyondMttr: d.deadline_beyond_mttr,
    deadlineApproved: d.deadline_approved_at !== null,
  }
}

export async function getDegradation(
  deps: AppDeps,
  ability: AppAbility,
  limitId: number,
  ctx?: AuditContext,
): Promise<DegradationResponse> {
  const limit = readableRow(await repo.findLimitForTest(deps.db, limitId), ability, 'Limit')
  const actor: RuleActor = ctx ? await actorAt(deps.db, ability, ctx, limit.site_id) : { id: 0, ability, roles: [] }
  const now = deps.clock.now()
  const rows = await repo.listDegradations(deps.db, limitId)
  return {
    mttrHours: functionMttrHours(limit.subsystems),
    items: rows.map((r) => ({
      id: r.id,
      testId: r.test_id,
      openedAt: r.opened_at.toISOString(),
      reasons: r.reasons,
      compensatingMeasures: r.compensating_measures,
      repairDeadline: r.repair_deadline,
      measuresSignedBy: r.signer_name,
      measuresSignedAt: r.measures_signed_at?.toISOString() ?? null,
      mttrHours: r.mttr_hours === null ? null : Number(r.mttr_hours),
      deadlineBeyondMttr: r.deadline_beyond_mttr,
      deadlineApprovedBy: r.approver_name,
      deadlineApprovedAt: r.deadline_approved_at?.toISOString() ?? null,
      escalatedAt: r.escalated_at?.toISOString() ?? null,
      clearedAt: r.cleared_at?.toISOString() ?? null,
      clearedByTestId: r.cleared_by_test_id,
      actions: degradationActions(degradationRule(r, limit.site_id), actor, null, now),
    })),
  }
}

export async function listTripTests(deps: AppDeps, q: repo.TripTestListFilter): Promise<TripTestList> {
  const { total, rows } = await repo.listTripTests(deps.db, q)
  return {
    total,
    items: rows.map((r) => ({
      id: r.id,
      limitId: r.limit_id,
      siteId: r.site_id,
      limitTag: r.tag,
      kind: r.kind,
      scope: r.scope,
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
      source: r.source,
      testerName: r.tester_name,
    })),
  }
}

/**
 * The schedule: active limits with their due date and status; `late` lists limits with a test done inside the
 * grace.
 */
export async function schedule(deps: AppDeps, q: repo.ScheduleFilter & { late?: boolean }): Promise<ScheduleResponse> {
  const rows = await repo.scheduleRows(deps.db, q)
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
    deferredTo: r.deferred_to,
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
  const counts = await repo.scheduleCounts(deps.db, q.siteIds, q.areaIds)
  return { items, total: items.length, counts: Object.fromEntries(counts.map((c) => [c.test_status, Number(c.n)])) }
}

/** Stores an attachment on a record before it is signed. */
export async function attachToTripTest(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  store: (
    trx: Trx,
  ) => Promise<{ id: number; file_name: string; content_type: string; size_bytes: number; sha256: string }>,
) {
  return deps.db.transaction().execute(async (trx) => {
    const row = readableRow(await repo.lockTripTest(trx, id), ability, 'TripTest', 'Trip test')
    const actor = await actorAt(trx, ability, ctx, row.site_id)
    enforce((await verdictsFor(trx, row, actor, deps.clock.now())).verdicts.attach)
    const a = await store(trx)
    await appendAudit(trx, deps.clock, ctx, {
      action: 'trip_test.attach',
      entityType: ENTITY,
      entityId: id,
      after: attachmentFacts(a),
    })
    return { id: a.id, fileName: a.file_name, contentType: a.content_type, sizeBytes: a.size_bytes }
  })
}

/** What the certificate prints beside the record. */
export async function certificateContext(deps: AppDeps, limitId: number) {
  const l = await repo.findLimitForTest(deps.db, limitId)
  if (!l) throw notFound('Limit')
  return { siteName: l.site_name, limitDescription: l.description, timeZone: l.time_zone }
}

// ---- test deferrals

/**
 * The product's risk assessment of a deferral: the PFDavg of the function with its proof-test interval stretched
 * from the last passing full test to the new due date, against the target SIL (docs/domain/test-deferrals.md).
 */
export function deferralRisk(
  l: { sil: Limit['sil']; subsystems: Subsystem[]; test_interval_months: number },
  lastFullPass: string,
  newDueDate: string,
): DeferralRisk {
  const { subsystems } = l
  const stretchedIntervalHours =
    (Date.parse(`${newDueDate}T00:00:00Z`) - Date.parse(`${lastFullPass}T00:00:00Z`)) / 36e5
  if (l.sil === null || subsystems.length === 0)
    return {
      intervalMonths: l.test_interval_months,
      stretchedIntervalHours,
      designPfd: null,
      stretchedPfd: null,
      targetSil: l.sil,
      meetsTarget: null,
      explanation:
        l.sil === null
          ? 'Not a SIL-rated function: no PFDavg target to hold the deferral against'
          : 'No subsystem reliability data: the PFDavg cannot be computed; the approver judges without it',
    }
  const designPfd = sifPfd(subsystems)
  const stretchedPfd = Math.min(
    1,
    subsystems.reduce(
      (sum, x) =>
        sum +
        subsystemPfd(x, {
          testIntervalHours: Math.max(intervalHours(x.testIntervalMonths), stretchedIntervalHours),
        }),
      0,
    ),
  )
  const cmp = compareToTarget(l.sil, stretchedPfd)
  return {
    intervalMonths: l.test_interval_months,
    stretchedIntervalHours,
    designPfd,
    stretchedPfd,
    targetSil: l.sil,
    meetsTarget: cmp.meetsTarget,
    explanation:
      `With the interval stretched to ${Math.round(stretchedIntervalHours)} h: ${cmp.explanation} ` +
      `(design PFDavg ${designPfd.toPrecision(3)})`,
  }
}

function toDeferralDto(
  r: NonNullable<Awaited<ReturnType<typeof repo.findDeferral>>>,
  actor: RuleActor,
  now: Date,
): TestDeferralDto {
  const days = (Date.parse(`${r.new_due_date}T00:00:00Z`) - Date.parse(`${r.original_due_date}T00:00:00Z`)) / 864e5
  return {
    id: r.id,
    limitId: r.limit_id,
    limitTag: r.tag,
    siteId: r.site_id,
    sil: r.sil,
    status: r.status,
    inForce: r.status === 'approved' && r.test_due_date === r.new_due_date,
    originalDueDate: r.original_due_date,
    newDueDate: r.new_due_date,
    extensionDays: Math.round(days),
    reason: r.reason,
    compensatingMeasures: r.compensating_measures,
    risk: r.risk,
    requiredRole: r.required_role,
    requestedById: r.requested_by,
    requestedBy: r.requester_name,
    requestedAt: r.requested_at.toISOString(),
    decidedBy: r.decider_name,
    decidedAt: r.decided_at?.toISOString() ?? null,
    decisionComment: r.decision_comment,
    contentHash: r.content_hash,
    actions: deferralActions(
      { siteId: r.site_id, status: r.status, requestedById: r.requested_by, requiredRole: r.required_role },
      actor,
      null,
      now,
    ),
  }
}

export async function getDeferral(deps: AppDeps, ability: AppAbility, ctx: AuditContext, id: number) {
  const r = readableRow(await repo.findDeferral(deps.db, id), ability, 'TripTest', 'Test deferral')
  return toDeferralDto(r, await actorAt(deps.db, ability, ctx, r.site_id), deps.clock.now())
}

export async function listDeferrals(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  q: Omit<repo.DeferralListFilter, 'siteIds'> & { siteIds: number[] } & Partial<TestDeferralListQuery>,
): Promise<TestDeferralList> {
  const { total, rows } = await repo.listDeferrals(deps.db, q)
  const now = deps.clock.now()
  const actors = new Map<number, RuleActor>()
  const items: TestDeferralDto[] = []
  for (const r of rows) {
    if (!actors.has(r.site_id)) actors.set(r.site_id, await actorAt(deps.db, ability, ctx, r.site_id))
    items.push(toDeferralDto(r, actors.get(r.site_id)!, now))
  }
  return { total, items }
}

/** Requests a deferral of a limit's next full test, with the product's risk assessment. */
export async function requestDeferral(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  input: Required<Pick<TestDeferralInput, 'limitId' | 'newDueDate' | 'reason' | 'compensatingMeasures'>>,
): Promise<TestDeferralDto> {
  const pre = await repo.findLimitForTest(deps.db, input.limitId)
  // another site's limit answers as a missing one (docs/security.md#authorization)
  if (!pre || !allows(ability, 'read', 'Limit', { siteId: pre.site_id }))
    throw validationFailed({ limitId: ['The limit does not exist'] })
  const actor = await actorAt(deps.db, ability, ctx, pre.site_id)
  const id = await deps.db.transaction().execute(async (trx) => {
    await repo.lockLimit(trx, input.limitId)
    const l = (await repo.findLimitForTest(trx, input.limitId))!
    const now = deps.clock.now()
    const policy = policyOf(l)
    const sched = await computeSchedule(trx, l.id, now)
    const plainDue = sched.deferredFrom ?? sched.dueDate
    const openRequested = (await repo.requestedDeferrals(trx, l.id)).length > 0
    const extensionDays =
      plainDue === null
        ? 0
        : Math.round((Date.parse(`${input.newDueDate}T00:00:00Z`) - Date.parse(`${plainDue}T00:00:00Z`)) / 864e5)
    enforce(
      checkDeferralRequest(
        {
          siteId: l.site_id,
          limitActive: l.status === 'active',
          dueDate: plainDue,
          today: sched.today,
          newDueDate: input.newDueDate,
          intervalMonths: l.test_interval_months,
          openDeferral: openRequested || sched.deferredFrom !== null,
          extensionDays,
        },
        actor,
        policy,
      ),
    )
    const risk = deferralRisk(l, sched.lastFullPass!, input.newDueDate)
    const requiredRole = deferralApproverRole(policy, l.sil)
    const content = {
      limitId: l.id,
      originalDueDate: plainDue,
      newDueDate: input.newDueDate,
      reason: input.reason,
      compensatingMeasures: input.compensatingMeasures,
      risk,
    }
    const hash = contentHash(content)
    const row = await repo.insertDeferral(trx, {
      limit_id: l.id,
      site_id: l.site_id,
      original_due_date: plainDue!,
      new_due_date: input.newDueDate,
      reason: input.reason,
      compensating_measures: JSON.stringify(input.compensatingMeasures),
      risk: JSON.stringify(risk),
      required_role: requiredRole,
      content_hash: hash,
      requested_by: ctx.actorId!,
      requested_at: now,
    })
    const deciders = await findUsersWithRole(trx, l.site_id, [requiredRole])
    await mailNotice(
      trx,
      deps.clock,
      deciders.filter((u) => u.id !== ctx.actorId),
      {
        subject: `Decide: test deferral of ${l.tag}`,
        topic: 'trip_test',
        paragraphs: [
          `A deferral of the full test of ${l.tag} from ${plainDue} to ${input.newDueDate} is requested: ` +
            `${input.reason}.`,
          risk.explanation,
        ],
        link: { url: `${deps.config.appUrl}/tests/deferrals`, label: 'Open the test deferrals' },
      },
    )
    await appendAudit(trx, deps.clock, ctx, {
      action: 'test_deferral.request',
      entityType: DEFERRAL,
      entityId: row.id,
      after: { ...content, requiredRole, contentHash: hash },
    })
    return row.id
  })
  return getDeferral(deps, ability, ctx, id)
}

/** Approves or rejects a deferral with a signature; an approval moves the due date while it is valid. */
export async function decideDeferral(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  id: number,
  decision: 'approve' | 'reject',
  input: { password: string; comment: string },
): Promise<TestDeferralDto> {
  const pre = readableRow(await repo.findDeferral(deps.db, id), ability, 'TripTest', 'Test deferral')
  const actor = await actorAt(deps.db, ability, ctx, pre.site_id)
  const early = toDeferralDto(pre, actor, deps.clock.now()).actions[decision]
  if (!early.allowed && early.status === 403) enforce(early)
  if (decision === 'reject' && !input.comment) throw validationFailed({ comment: ['Say why the deferral is rejected'] })
  const signer = await verifySignaturePassword(deps, ctx.actorId!, input.password, ctx, {
    entityType: DEFERRAL,
    entityId: id,
  })
  await deps.db
    .transaction()
    .execute(async (trx) => {
      await repo.lockLimit(trx, pre.limit_id)
      const d = await repo.lockDeferral(trx, id)
      if (!d) throw notFound('Test deferral')
      const now = deps.clock.now()
      enforce(
        deferralActions(
          { siteId: d.site_id, status: d.status, requestedById: d.requested_by, requiredRole: d.required_role },
          actor,
          null,
          now,
        )[decision],
      )
      let status: DeferralStatus = decision === 'approve' ? 'approved' : 'rejected'
      if (decision === 'approve') {
        // a deferral of a due date the tests have since moved, or whose new date has passed, no longer applies
        const sched = await computeSchedule(trx, d.limit_id, now)
        const plainDue = sched.deferredFrom ?? sched.dueDate
        if (plainDue !== d.original_due_date || d.new_due_date < sched.today) status = 'lapsed'
      }
      await repo.updateDeferral(trx, id, {
        status,
        decided_by: signer.id,
        decided_at: now,
        decision_comment: input.comment,
      })
      await signAs(trx, deps.clock, signer, {
        entityType: DEFERRAL,
        entityId: id,
        meaning: decision === 'approve' ? 'approved' : 'rejected',
        contentHash: d.content_hash,
        comment: input.comment,
      })
      await appendAudit(trx, deps.clock, ctx, {
        action: `test_deferral.${decision}`,
        entityType: DEFERRAL,
        entityId: id,
        after: { signer: signer.name, status, contentHash: d.content_hash, comment: input.comment },
      })
      await refreshTestSchedule(trx, d.limit_id, now)
      if (status === 'lapsed') throw new LapsedError()
    })
    .catch((e) => {
      if (e instanceof LapsedError)
        enforce({
          allowed: false,
          status: 409,
          reason: 'The due date has moved since the request, or the new date has passed: request the deferral again',
        })
      throw e
    })
  return getDeferral(deps, ability, ctx, id)
}

class LapsedError extends Error {}

export { ENTITY as TRIP_TEST_ENTITY }
export type { Clock }
export type { SitePolicy }
