import { describe, expect, it } from 'vitest'
import {
  chatterEpisodes,
  LimitStateMachine,
  type LimitSettings,
  replayLimit,
  suggestSettings,
} from '../../../shared/domain/alarm-limit-state.ts'

// Worked deadband/delay scenario of the alarm-management reference (deadband, on-delay and off-delay as defined
// in OPC UA Part 9 Alarms & Conditions and ISA-18.2): high alarm SP = 80, 1 s sampling, PV 75 (t = 0–9 s),
// 81 (10–19), 79 (20–24), 81 (25–44), 79 (45–49), 77 (50–69), 79 (70–74), 77 (75 s onward, here to 200 s).
function scenario(): { t: number[]; v: number[] } {
  const t: number[] = []
  const v: number[] = []
  for (let s = 0; s <= 200; s++) {
    t.push(s)
    v.push(s < 10 ? 75 : s < 20 ? 81 : s < 25 ? 79 : s < 45 ? 81 : s < 50 ? 79 : s < 70 ? 77 : s < 75 ? 79 : 77)
  }
  return { t, v }
}
const high = (deadband: number, onDelaySec: number, offDelaySec: number, latching = false): LimitSettings => ({
  direction: 'high',
  setpoint: 80,
  deadband,
  onDelaySec,
  offDelaySec,
  latching,
})

describe('replayLimit on the reference scenario (expected events from the reference table)', () => {
  it.each([
    [0, 0, 0, [10, 25], [20, 45]],
    [2, 0, 0, [10], [50]],
    [2, 15, 0, [40], [50]],
    [2, 15, 60, [40], [135]],
  ])('DB %s, on-delay %s s, off-delay %s s', (db, on, off, activations, returns) => {
    const { t, v } = scenario()
    const r = replayLimit(t, v, high(db, on, off))
    expect(r.activations).toEqual(activations)
    expect(r.returns).toEqual(returns)
    // time in alarm worked by hand: the sum of (return − activation)
    expect(r.timeInAlarmSec).toBe(returns.reduce((sum, ret, i) => sum + ret - activations[i], 0))
  })
})

describe('boundary convention: active when PV ≥ SP, returns when PV < SP − DB (high)', () => {
  it('a value exactly at the setpoint activates; just below does not', () => {
    const m = new LimitStateMachine(high(2, 0, 0))
    expect(m.step(0, 79.999)).toEqual([])
    expect(m.step(1, 80)).toEqual([{ kind: 'active', t: 1 }])
  })
  it('a value exactly at SP − DB holds the alarm; just below returns it', () => {
    const m = new LimitStateMachine(high(2, 0, 0))
    m.step(0, 81)
    expect(m.step(1, 78)).toEqual([])
    expect(m.active).toBe(true)
    expect(m.step(2, 77.999)).toEqual([{ kind: 'return', t: 2 }])
  })
  it('low limit: exactly at SP activates, exactly at SP + DB holds, above returns', () => {
    const m = new LimitStateMachine({ ...high(2, 0, 0), direction: 'low', setpoint: 20 })
    expect(m.step(0, 20)).toEqual([{ kind: 'active', t: 0 }])
    expect(m.step(1, 22)).toEqual([])
    expect(m.step(2, 22.001)).toEqual([{ kind: 'return', t: 2 }])
  })
  it('an on-delay that expires between two samples takes effect when it expires (sample-and-hold)', () => {
    const m = new LimitStateMachine(high(0, 5, 0))
    m.step(0, 85)
    expect(m.step(10, 85)).toEqual([{ kind: 'active', t: 5 }])
  })
})

describe('latching with manual reset only once back inside (OPC UA Part 9 latched state)', () => {
  it('refuses a reset while the value is beyond the return threshold, allows it once back inside', () => {
    const m = new LimitStateMachine(high(2, 0, 0, true))
    m.step(0, 85)
    expect(m.reset(1)).toBe(false)
    m.step(2, 79) // inside the setpoint but not below SP − DB = 78
    expect(m.reset(3)).toBe(false)
    expect(m.step(4, 77)).toEqual([{ kind: 'reset_allowed', t: 4 }])
    expect(m.active).toBe(true) // latched: still active without the reset
    m.step(5, 79)
    expect(m.resetAllowed).toBe(false) // left the inside again
    m.step(6, 77)
    expect(m.reset(7)).toBe(true)
    expect(m.active).toBe(false)
  })
  it('replay reports the first allowed reset of each latched activation (scenario, DB 2, off-delay 60 s)', () => {
    const { t, v } = scenario()
    const r = replayLimit(t, v, high(2, 15, 60, true))
    expect(r.activations).toEqual([40])
    expect(r.firstResetAllowed).toEqual([135])
  })
})

describe('chattering: 3 or more activations within 60 s (reference, common threshold)', () => {
  it('counts episodes by hand', () => {
    // 0, 20, 60 → 60 − 0 = 60 ≤ 60: chatter; 61 continues the episode; 500, 530 only two → none
    expect(chatterEpisodes([0, 20, 60, 61, 500, 530])).toEqual([{ start: 0, end: 61, activations: 4 }])
    expect(chatterEpisodes([0, 20, 60.5])).toEqual([])
    expect(chatterEpisodes([0, 1, 2, 1000, 1001, 1002])).toHaveLength(2)
  })
})

describe('suggestSettings', () => {
  it('picks the smallest deadband and delay that remove chattering within the response time', () => {
    // a value oscillating 79.5 / 80.5 every 5 s from t = 100 s, then a genuine rise to 90 at t = 400 s
    const t: number[] = []
    const v: number[] = []
    for (let s = 0; s < 600; s++) {
      t.push(s)
      v.push(s < 100 ? 70 : s < 400 ? (Math.floor(s / 5) % 2 ? 80.5 : 79.5) : 90)
    }
    const present = high(0, 0, 0)
    expect(replayLimit(t, v, present).chatterEpisodes.length).toBeGreaterThan(0)
    const s = suggestSettings(t, v, present, {
      deadbands: [0, 0.5, 1, 2],
      onDelays: [0, 5, 10],
      offDelays: [0],
      maxDelaySec: 60,
    })
    // first activation at 105 s (80.5 from 105 to 109). Deadband 0 with an on-delay of 5 or 10 s never sees 80.5
    // last longer than 5 s, so it first activates at 400 s: 295 s late, beyond the 60 s to respond. Deadband 0.5:
    // 79.5 is not below 80 − 0.5, so the alarm holds from 105 s on: one activation, no delay.
    expect(s).toMatchObject({ deadband: 0.5, onDelaySec: 0, offDelaySec: 0, firstActivationDelaySec: 0 })
    expect(s?.result.activations).toEqual([105])
  })
  it('refuses a candidate that delays the first activation beyond the response time', () => {
    const t = [0, 10, 20, 30, 40, 50]
    const v = [81, 79, 81, 79, 81, 79]
    const s = suggestSettings(t, v, high(0, 0, 0), {
      deadbands: [0],
      onDelays: [0, 15],
      offDelays: [0],
      maxDelaySec: 5,
    })
    expect(s).toBeNull()
  })
})
