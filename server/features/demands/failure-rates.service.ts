import {
  exposureHours,
  judgeAssumedRate,
  observedRate,
  type AssumptionVerdict,
} from '../../../shared/domain/observed-rates.ts'
import type {
  FailureRateGroup,
  FailureRateLimit,
  FailureRates,
  ProposeLambdaDuInput,
} from '../../../shared/schemas/demands.ts'
import type { AppAbility } from '../../../shared/abilities/index.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { invalidState, notFound } from '../../errors.ts'
import type { AuditContext } from '../audit/audit.repository.ts'
import { createChangeRequest } from '../change-requests/change-requests.service.ts'
import * as repo from './demands.repository.ts'

const DANGEROUS = new Set(['out_dangerous', 'no_trip'])
const RANK: Record<FailureRateGroup['verdict'], number> = {
  none: 0,
  supported: 1,
  not_enough_experience: 2,
  above: 3,
}

export const FAILURE_RATES_NOTE =
  'Observed λDU per channel = dangerous undetected failures found ' +
  '(at proof tests as found, in operation, on demand) ÷ ' +
  'instrument hours in service ' +
  '(from the earliest commissioning of its limits, else its entry in the register). ' +
  'Upper bounds are one-sided chi-square bounds at 70 % and 90 %; ' +
  'a model is flagged when failures were found and the ' +
  '70 % bound exceeds the λDU assumed in a sensor subsystem. Unrecorded failures make the rate too low. Low demand ' +
  'mode only; not a SIL verification. A new figure is applied only through a change request.'

/**
 * Observed λDU per device kind and model against the λDU assumed in the sensor subsystems of the SIL-rated limits
 * those instruments serve (docs/domain/observed-rates.md#failure-rates-of-device-models). A failure of one
 * instrument found on the same day by a test and an event counts once.
 */
export async function failureRates(
  deps: AppDeps,
  siteIds: number[],
  period: { from: Date | null; to: Date },
): Promise<FailureRates> {
  const from = period.from ?? new Date(0)
  const [instruments, tests, events, limits] = await Promise.all([
    repo.instrumentsInService(deps.db, siteIds),
    repo.dangerousAsFoundTests(deps.db, siteIds, from, period.to),
    repo.dangerousUndetectedDemands(deps.db, siteIds, from, period.to),
    repo.silLimitsWithChannels(deps.db, siteIds),
  ])
  const day = (d: Date) => d.toISOString().slice(0, 10)
  const seen = new Set<string>()
  type Source = 'test' | 'operation' | 'demand'
  const found = new Map<number, Record<Source, number>>()
  const count = (instrumentId: number, at: Date, source: Source) => {
    const key = `${instrumentId}:${day(at)}`
    if (seen.has(key)) return
    seen.add(key)
    const c = found.get(instrumentId) ?? { test: 0, operation: 0, demand: 0 }
    c[source] += 1
    found.set(instrumentId, c)
  }
  for (const t of tests) {
    const channels = t.channels ?? []
    if (channels.length) {
      for (const ch of channels) if (DANGEROUS.has(ch.asFoundResult)) count(ch.instrumentId, t.performed_at, 'test')
    } else if (DANGEROUS.has(t.as_found_result)) count(t.primary_instrument_id, t.performed_at, 'test')
  }
  let unattributed = 0
  for (const e of events) {
    if (e.instrument_id === null) unattributed += 1
    else count(e.instrument_id, e.occurred_at, e.kind === 'failure_on_demand' ? 'demand' : 'operation')
  }

  const groups = new Map<string, FailureRateGroup & { ids: Set<number> }>()
  for (const i of instruments) {
    const key = `${i.device_kind}\u0000${i.model.trim()}`
    const g = groups.get(key) ?? {
      deviceKind: i.device_kind,
      model: i.model.trim(),
      instrumentTags: [],
      ids: new Set<number>(),
      exposureHours: 0,
      failures: 0,
      failuresAtTests: 0,
      failuresInOperation: 0,
      failuresOnDemand: 0,
      pointEstimate: null,
      upper70: null,
      upper90: null,
      limits: [],
      verdict: 'none' as const,
    }
    g.instrumentTags.push(i.tag)
    g.ids.add(i.id)
    const inService = i.commissioned_at ? new Date(`${i.commissioned_at}T00:00:00Z`) : i.created_at
    g.exposureHours += exposureHours({ from, to: period.to }, inService)
    const c = found.get(i.id)
    if (c) {
      g.failuresAtTests += c.test
      g.failuresInOperation += c.operation
      g.failuresOnDemand += c.demand
      g.failures += c.test + c.operation + c.demand
    }
    groups.set(key, g)
  }

  for (const g of groups.values()) {
    if (!(g.exposureHours > 0)) continue
    const o = observedRate(g.failures, g.exposureHours)
    g.pointEstimate = o.pointEstimate
    g.upper70 = o.upper70
    g.upper90 = o.upper90
    if (!g.model) continue
    for (const l of limits) {
      const channels = new Set([l.primary_instrument_id, ...(l.channel_ids ?? [])])
      if (![...channels].some((id) => g.ids.has(id))) continue
      const sensor = l.subsystems.find((s) => s.role === 'sensor')
      if (!sensor) continue
      const verdict: AssumptionVerdict = judgeAssumedRate(o, sensor.lambdaDu)
      const row: FailureRateLimit = {
        limitId: l.id,
        limitTag: l.tag,
        siteId: l.site_id,
        siteCode: l.site_code,
        sil: l.sil,
        assumedLambdaDu: sensor.lambdaDu,
        verdict,
      }
      g.limits.push(row)
      if (RANK[verdict] > RANK[g.verdict]) g.verdict = verdict
    }
  }

  return {
    period: { from: period.from ? period.from.toISOString() : null, to: period.to.toISOString() },
    groups: [...groups.values()]
      .map(({ ids: _ids, ...g }) => g)
      .sort(
        (a, b) =>
          RANK[b.verdict] - RANK[a.verdict] ||
          a.deviceKind.localeCompare(b.deviceKind) ||
          a.model.localeCompare(b.model),
      ),
    unattributedFailures: unattributed,
    note: FAILURE_RATES_NOTE,
  }
}

/** The figure proposed for a subsystem's λDU: the 70 % upper bound rounded up to two significant digits. */
export function proposedLambdaDu(upper70: number): number {
  const exp = Math.floor(Math.log10(upper70)) - 1
  const scale = 10 ** exp
  return Number((Math.ceil(upper70 / scale - 1e-9) * scale).toPrecision(2))
}

/**
 * Opens a draft change request that sets the sensor λDU of a limit to the observed 70 % bound of a device kind and
 * model whose bound exceeds the assumption. The figure is computed here, never taken from the client; nothing changes
 * on the limit until the request is approved and implemented through management of change.
 */
export async function proposeObservedLambdaDu(
  deps: AppDeps,
  ability: AppAbility,
  ctx: AuditContext,
  siteIds: number[],
  input: ProposeLambdaDuInput,
): Promise<{ changeRequestId: number; proposedLambdaDu: number }> {
  // a role that may propose changes nowhere is refused before any rate is looked up (403, nothing told)
  authorize(ability, 'create', 'ChangeRequest')
  const rates = await failureRates(deps, siteIds, { from: null, to: deps.clock.now() })
  const group = rates.groups.find((g) => g.deviceKind === input.deviceKind && g.model === input.model.trim())
  const row = group?.limits.find((l) => l.limitId === input.limitId)
  if (!group || !row) throw notFound('Observed rate of this model on this limit')
  if (row.verdict !== 'above' || group.upper70 === null)
    throw invalidState('The observed 70 % bound of this model does not exceed the assumed λDU of this limit')
  authorize(ability, 'create', 'ChangeRequest', { siteId: row.siteId })
  const limit = await repo.limitSubsystems(deps.db, row.limitId)
  const figure = proposedLambdaDu(group.upper70)
  const subsystems = limit.subsystems.map((s) => (s.role === 'sensor' ? { ...s, lambdaDu: figure } : s))
  const f = (v: number) => v.toExponential(2)
  const changeRequestId = await createChangeRequest(deps, ability, ctx, {
    siteId: row.siteId,
    type: 'permanent',
    title: `${row.limitTag}: sensor λDU from the observed failure rate of ${group.model}`,
    rationale:
      `Observed λDU of ${group.model} (${group.deviceKind}): ${group.failures} dangerous undetected failure(s) in ` +
      `${Math.round(group.exposureHours).toLocaleString('en-US')} instrument hours; ` +
      `upper bound ${f(group.upper70)} /h ` +
      `at 70 % and ${f(group.upper90 ?? group.upper70)} /h at 90 % (chi-square), ` +
      `against the ${f(row.assumedLambdaDu)} /h ` +
      `assumed in the sensor subsystem. Proposed: ${f(figure)} /h (the 70 % bound rounded up). Check the failures ` +
      'behind the figure and the PFDavg against the target before approving.',
    hazardReference: '',
    expiresAt: null,
    items: [{ kind: 'modify', limitId: row.limitId, changes: { subsystems } }],
  })
  return { changeRequestId, proposedLambdaDu: figure }
}
