import type { Instrument, Limit, Process } from '../../../shared/schemas/register.ts'
import type { InstrumentRow, LimitFunctionRow, ProcessRow } from '../../db/schema.ts'

const n = (v: string | null): number | null => (v === null ? null : Number(v))

/** A register record's id and where it stands: its site, area and process. */
function placeOf<R extends { id: number; site_id: number; area_id: number; process_id: number; process_name?: string }>(
  r: R,
) {
  const processName: R['process_name'] = r.process_name
  return { id: r.id, siteId: r.site_id, areaId: r.area_id, processId: r.process_id, processName }
}

/** A record kept against a limit (a demand, a change proposal): its id, site and limit with their codes. */
export function limitRecordOf<L extends number | null, T extends string | null>(r: {
  id: number
  site_id: number
  site_code: string
  limit_id: L
  limit_tag: T
}) {
  return { id: r.id, siteId: r.site_id, siteCode: r.site_code, limitId: r.limit_id, limitTag: r.limit_tag }
}

export function toProcess(r: ProcessRow): Process {
  return { id: r.id, areaId: r.area_id, siteId: r.site_id, name: r.name, description: r.description }
}

export function toInstrument(
  r: InstrumentRow & { process_name?: string },
): Instrument & { revision: number; updatedAt: string } {
  return {
    ...placeOf(r),
    tag: r.tag,
    measuredVariable: r.measured_variable,
    unit: r.unit,
    pressureReference: r.pressure_reference,
    rangeLow: Number(r.range_low),
    rangeHigh: Number(r.range_high),
    normalLow: n(r.normal_low),
    normalHigh: n(r.normal_high),
    designLow: n(r.design_low),
    designHigh: n(r.design_high),
    burnout: r.burnout,
    signal: r.signal,
    deviceKind: r.device_kind,
    deviceDescription: r.device_description,
    model: r.model,
    revision: r.revision,
    updatedAt: r.updated_at.toISOString(),
  }
}

export type LimitListRow = LimitFunctionRow & {
  process_name: string
  area_name: string
  site_code: string
  pi_tag: string | null
  pi_unit: string | null
  pi_variable: string | null
  pi_range_low: string | null
  pi_range_high: string | null
}

/** Row (joined with names and its primary instrument) → API shape; instrumentIds come from limit_instrument. */
export function toLimit(r: LimitListRow, instrumentIds: number[]): Limit {
  return {
    ...placeOf(r),
    areaName: r.area_name,
    siteCode: r.site_code,
    tag: r.tag,
    description: r.description,
    instrumentIds,
    direction: r.direction,
    limitClass: r.limit_class,
    setpoint: Number(r.setpoint),
    deadband: Number(r.deadband),
    deadbandUnit: r.deadband_unit,
    onDelaySec: Number(r.on_delay_sec),
    offDelaySec: Number(r.off_delay_sec),
    latching: r.latching,
    resetRole: r.reset_role,
    badValueTrip: r.bad_value_trip,
    action: r.action,
    consequence: r.consequence,
    operatorResponse: r.operator_response,
    responseTimeMin: n(r.response_time_min),
    severity: r.severity,
    priority: r.priority,
    priorityExplanation: r.priority_explanation,
    analyticalLimit: n(r.analytical_limit),
    processSafetyTimeSec: n(r.process_safety_time_sec),
    requiredResponseTimeSec: n(r.required_response_time_sec),
    bypassPermitted: r.bypass_permitted,
    maxBypassHours: n(r.max_bypass_hours),
    compensatingMeasures: r.compensating_measures,
    testIntervalMonths: r.test_interval_months,
    testGraceDays: r.test_grace_days,
    codeSetInterval: r.code_set_interval,
    sil: r.sil,
    subsystems: r.subsystems,
    alarmType: r.alarm_type,
    causes: r.causes,
    confirmation: r.confirmation,
    impactCategory: r.impact_category,
    safetyRelatedAlarm: r.safety_related_alarm,
    claimedRiskReduction: n(r.claimed_risk_reduction),
    status: r.status,
    revision: r.revision,
    protectionState: r.protection_state,
    testStatus: r.test_status,
    testDueDate: r.test_due_date,
    lastFullPass: r.last_full_pass,
    operatingWindow: { errors: r.window_errors, warnings: r.window_warnings },
    primaryInstrument:
      r.pi_tag === null
        ? null
        : {
            id: r.primary_instrument_id,
            tag: r.pi_tag,
            unit: r.pi_unit ?? '',
            measuredVariable: r.pi_variable ?? '',
            rangeLow: Number(r.pi_range_low),
            rangeHigh: Number(r.pi_range_high),
          },
    updatedAt: r.updated_at.toISOString(),
  }
}

/** The fields a revision snapshot keeps (the limit's own definition, without derived and joined values). */
export function limitSnapshot(l: Limit): Record<string, unknown> {
  const {
    id: _id,
    processName: _p,
    areaName: _a,
    siteCode: _s,
    primaryInstrument: _pi,
    updatedAt: _u,
    protectionState: _ps,
    testStatus: _ts,
    testDueDate: _td,
    lastFullPass: _lf,
    ...rest
  } = l
  return rest
}
