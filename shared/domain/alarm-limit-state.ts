// One state machine for every alarm or trip limit replayed on recorded process data (docs/domain/alarm-figures.md,
// "The limit state machine"). Deadband, on-delay and off-delay follow OPC UA Part 9 (Alarms & Conditions) and
// ISA-18.2; latching
// follows OPC UA Part 9's latched state: once active, the limit stays active until reset, and a reset is allowed
// only once the value is back inside.
//
// Boundary convention of this product (stated because systems differ):
//   high limit: the condition is TRUE when value ≥ setpoint; it returns when value < setpoint − deadband;
//   low limit:  the condition is TRUE when value ≤ setpoint; it returns when value > setpoint + deadband.
// So a value exactly at the setpoint activates, and a value exactly at setpoint − deadband (high) still holds the
// alarm. Samples are held until the next sample (sample-and-hold); a delay that expires between two samples takes
// effect at the moment it expires. Times are seconds (any epoch).

export type LimitDirection = 'high' | 'low'

export interface LimitSettings {
  direction: LimitDirection
  setpoint: number
  /** In the value's units, ≥ 0. */
  deadband: number
  /** Seconds the condition must hold continuously before the limit becomes active. */
  onDelaySec: number
  /** Seconds the return condition must hold continuously before the limit returns. */
  offDelaySec: number
  /** A latching limit stays active until reset; the replay resets it at the first moment a reset is allowed. */
  latching: boolean
}

/** `reset_allowed`: a latched limit's value is back inside (after the off-delay), so a manual reset may be made. */
export type LimitEventKind = 'active' | 'return' | 'reset_allowed'
export interface LimitEvent {
  kind: LimitEventKind
  t: number
}

/**
 * The state of one limit, fed sample by sample. `step` returns the events the sample caused (at most two: a delay
 * that expired before it, then the sample's own). A latching limit never returns by itself: `resetAllowed` tells
 * when a manual reset is allowed and `reset` performs it (refused while the value is not back inside).
 */
export class LimitStateMachine {
  active = false
  /** Start of the running on-delay (condition true, not yet active), or NaN. */
  private pendingOn = Number.NaN
  /** Start of the running off-delay (active, return condition true), or NaN. */
  private pendingOff = Number.NaN
  /** Latching only: the moment a reset first became allowed in the present activation, or NaN. */
  resetAllowedSince = Number.NaN
  // the settings as plain numbers (a low limit is a high limit of −value): beyond when d·v ≥ d·SP, inside when
  // d·v < d·SP − DB
  private readonly dir: number
  private readonly sp: number
  private readonly back: number
  private readonly onDelay: number
  private readonly offDelay: number

  /**
   * `autoReset`: a latched limit is reset at the first moment a reset is allowed (the replay's assumption: the
   * operator resets as soon as the rules let them).
   */
  constructor(
    readonly settings: LimitSettings,
    readonly autoReset = false,
  ) {
    if (!(settings.deadband >= 0) || !(settings.onDelaySec >= 0) || !(settings.offDelaySec >= 0))
      throw new RangeError('Deadband and delays must be zero or more')
    this.dir = settings.direction === 'high' ? 1 : -1
    this.sp = this.dir * settings.setpoint
    this.back = this.sp - settings.deadband
    this.onDelay = settings.onDelaySec
    this.offDelay = settings.offDelaySec
  }

  /** Advances to time t with value v. */
  step(t: number, v: number, out: LimitEvent[] = []): LimitEvent[] {
    const x = this.dir * v
    // 1. delays that expired while the previous value was held
    if (!this.active && this.pendingOn === this.pendingOn && t - this.pendingOn > this.onDelay) {
      this.activate(this.pendingOn + this.onDelay, out)
    } else if (this.active && this.pendingOff === this.pendingOff && t - this.pendingOff > this.offDelay) {
      this.returnOrAllowReset(this.pendingOff + this.offDelay, out)
    }
    // 2. the new value
    if (!this.active) {
      if (x >= this.sp) {
        if (this.pendingOn !== this.pendingOn) this.pendingOn = t
        if (t - this.pendingOn >= this.onDelay) this.activate(this.pendingOn + this.onDelay, out)
      } else this.pendingOn = Number.NaN
    } else {
      if (x < this.back) {
        if (this.pendingOff !== this.pendingOff && this.resetAllowedSince !== this.resetAllowedSince)
          this.pendingOff = t
        if (this.pendingOff === this.pendingOff && t - this.pendingOff >= this.offDelay)
          this.returnOrAllowReset(this.pendingOff + this.offDelay, out)
      } else {
        this.pendingOff = Number.NaN
        // a latched limit whose value leaves the inside again must wait for it to come back before a reset
        this.resetAllowedSince = Number.NaN
      }
    }
    return out
  }

  /** Whether a manual reset is allowed now (latching limits only: active and the value back inside). */
  get resetAllowed(): boolean {
    return this.settings.latching && this.active && this.resetAllowedSince === this.resetAllowedSince
  }

  /** Manual reset of a latched limit at time t; returns false (and changes nothing) when it is not allowed. */
  reset(t: number, out: LimitEvent[] = []): boolean {
    if (!this.resetAllowed) return false
    this.active = false
    this.resetAllowedSince = Number.NaN
    this.pendingOff = Number.NaN
    out.push({ kind: 'return', t })
    return true
  }

  private activate(t: number, out: LimitEvent[]) {
    this.active = true
    this.pendingOn = Number.NaN
    this.pendingOff = Number.NaN
    this.resetAllowedSince = Number.NaN
    out.push({ kind: 'active', t })
  }

  private returnOrAllowReset(t: number, out: LimitEvent[]) {
    this.pendingOff = Number.NaN
    if (this.settings.latching) {
      this.resetAllowedSince = t
      out.push({ kind: 'reset_allowed', t })
      if (!this.autoReset) return
      this.resetAllowedSince = Number.NaN
    }
    this.active = false
    out.push({ kind: 'return', t })
  }
}

/** Chattering: `count` or more activations within `windowSec` (inclusive); common threshold 3 in 60 s. */
export interface ChatterRule {
  count: number
  windowSec: number
}
export const DEFAULT_CHATTER_RULE: ChatterRule = { count: 3, windowSec: 60 }

/**
 * Chattering episodes among sorted activation times: an activation chatters when it and the `count − 1` before it
 * fall within `windowSec`; chattering activations no more than `windowSec` apart belong to one episode.
 */
export function chatterEpisodes(activations: ArrayLike<number>, rule: ChatterRule = DEFAULT_CHATTER_RULE) {
  const episodes: { start: number; end: number; activations: number }[] = []
  const k = rule.count - 1
  for (let i = k; i < activations.length; i++) {
    if (activations[i] - activations[i - k] > rule.windowSec) continue
    const last = episodes[episodes.length - 1]
    if (last && activations[i - k] <= last.end + rule.windowSec && activations[i - k] >= last.start) {
      last.activations += 1
      last.end = activations[i]
    } else episodes.push({ start: activations[i - k], end: activations[i], activations: rule.count })
  }
  return episodes
}

export interface ReplayResult {
  settings: LimitSettings
  samples: number
  activations: number[]
  returns: number[]
  /** Latching limits: when a reset was first allowed after each activation (NaN when never in the data). */
  firstResetAllowed: number[]
  timeInAlarmSec: number
  chatterEpisodes: { start: number; end: number; activations: number }[]
  /** Still active at the last sample. */
  activeAtEnd: boolean
}

/**
 * Replays one limit over samples sorted by time (`t` seconds, `v` values; NaN values are skipped). A latching
 * limit is reset at the first moment a reset is allowed, so its time in alarm is the shortest possible.
 */
export function replayLimit(
  t: ArrayLike<number>,
  v: ArrayLike<number>,
  settings: LimitSettings,
  chatter: ChatterRule = DEFAULT_CHATTER_RULE,
): ReplayResult {
  const m = new LimitStateMachine(settings, true)
  const activations: number[] = []
  const returns: number[] = []
  const firstResetAllowed: number[] = []
  const out: LimitEvent[] = []
  let inAlarm = 0
  let since = Number.NaN
  let samples = 0
  const n = Math.min(t.length, v.length)
  for (let i = 0; i < n; i++) {
    const value = v[i]
    if (value !== value) continue
    samples++
    m.step(t[i], value, out)
    if (!out.length) continue
    for (let j = 0; j < out.length; j++) {
      const e = out[j]
      if (e.kind === 'active') {
        activations.push(e.t)
        since = e.t
      } else if (e.kind === 'reset_allowed') {
        firstResetAllowed[activations.length - 1] = e.t
      } else {
        returns.push(e.t)
        inAlarm += e.t - since
        since = Number.NaN
      }
    }
    out.length = 0
  }
  const end = n ? t[n - 1] : 0
  if (m.active && since === since) inAlarm += end - since
  for (let i = 0; i < activations.length; i++) if (firstResetAllowed[i] === undefined) firstResetAllowed[i] = NaN
  return {
    settings,
    samples,
    activations,
    returns,
    firstResetAllowed: settings.latching ? firstResetAllowed : [],
    timeInAlarmSec: inAlarm,
    chatterEpisodes: chatterEpisodes(activations, chatter),
    activeAtEnd: m.active,
  }
}

export interface WhatIfCandidate {
  deadband: number
  onDelaySec: number
  offDelaySec: number
}

export interface Suggestion extends WhatIfCandidate {
  result: ReplayResult
  /** Seconds the first activation comes later than with the present settings. */
  firstActivationDelaySec: number
}

/**
 * The smallest deadband, then the smallest on-delay, then the smallest off-delay (from the candidate lists, each
 * ascending) that leave no chattering episode while delaying the first activation of the present settings by no
 * more than `maxDelaySec` (the operator's time to respond). Null when the present settings do not chatter or no
 * candidate qualifies.
 */
export function suggestSettings(
  t: ArrayLike<number>,
  v: ArrayLike<number>,
  present: LimitSettings,
  options: {
    deadbands: number[]
    onDelays: number[]
    offDelays: number[]
    maxDelaySec: number
    chatter?: ChatterRule
  },
): Suggestion | null {
  const chatter = options.chatter ?? DEFAULT_CHATTER_RULE
  const base = replayLimit(t, v, present, chatter)
  if (!base.chatterEpisodes.length || !base.activations.length) return null
  const first = base.activations[0]
  const sorted = (xs: number[]) => [...new Set(xs)].sort((a, b) => a - b)
  for (const deadband of sorted(options.deadbands)) {
    for (const onDelaySec of sorted(options.onDelays)) {
      for (const offDelaySec of sorted(options.offDelays)) {
        const result = replayLimit(t, v, { ...present, deadband, onDelaySec, offDelaySec }, chatter)
        if (result.chatterEpisodes.length || !result.activations.length) continue
        const delay = result.activations[0] - first
        if (delay > options.maxDelaySec) continue
        return { deadband, onDelaySec, offDelaySec, result, firstActivationDelaySec: delay }
      }
    }
  }
  return null
}
