import { describe, expect, it } from 'vitest'
import { judgeVotedChannels, VOTING } from '../../../shared/domain/trip-test-result.ts'

// A voted function tested channel by channel (docs/trip-tests.md#voted-functions). Sources of the rules checked here:
// - MooN: N independent channels connected so that M of them are sufficient to perform the safety function
//   (IEC 61511-1 definitions and IEC 61508-4 §3.4, from memory): 2oo3 acts on two channels, 1oo2 on one, 2oo2 on two.
// - Every channel of a voted sensor subsystem is proven at the proof test, since a channel failed dangerously while the
//   vote still acts is a lost redundancy the PFD assumed (ISA-TR84.00.03 on testing each redundant device, and IEC
//   61511-1 §16.3; both from memory). Calling such a channel a failed test is common practice.
// - In tolerance / early / late follows the single-channel rule (common practice; as in trip-test-result.test.ts).
// Every expected value below is worked out by hand from the numbers in the case.

const highTrip = { direction: 'high' as const, setpoint: 780, tolerance: 6 }

describe('judgeVotedChannels', () => {
  it('2oo3 high trip, all channels in tolerance: the function trips at the second-lowest channel', () => {
    const j = judgeVotedChannels({
      ...highTrip,
      architecture: '2oo3',
      channels: [
        { asFound: 779, asLeft: null },
        { asFound: 781, asLeft: null },
        { asFound: 783, asLeft: null },
      ],
    })
    expect(j.channels.map((c) => c.asFoundResult)).toEqual(['in_tolerance', 'in_tolerance', 'in_tolerance'])
    expect(j.channels.every((c) => c.passed)).toBe(true)
    // 779, 781, 783 sorted upward: the 2nd value is where two channels have tripped on a rising temperature
    expect(j).toMatchObject({ tripped: 3, required: 2, acted: true, votedAsFound: 781, votedAsLeft: 781 })
  })

  it('2oo3 with one channel that did not trip: the vote still acts, but that channel fails', () => {
    const j = judgeVotedChannels({
      ...highTrip,
      architecture: '2oo3',
      channels: [
        { asFound: 779, asLeft: null },
        { asFound: null, asLeft: null },
        { asFound: 783, asLeft: null },
      ],
    })
    expect(j.channels[1]).toEqual({ asFoundResult: 'no_trip', asLeftResult: 'out', passed: false })
    expect(j.channels[0].passed && j.channels[2].passed).toBe(true)
    // two of three tripped in time (779 and 783): the vote is reached at 783
    expect(j).toMatchObject({ tripped: 2, acted: true, votedAsFound: 783 })
  })

  it('2oo3 with one channel late and one not tripping: the vote is lost', () => {
    const j = judgeVotedChannels({
      ...highTrip,
      architecture: '2oo3',
      channels: [
        { asFound: 779, asLeft: null },
        { asFound: 790, asLeft: 780 },
        { asFound: null, asLeft: null },
      ],
    })
    // 790 is 10 above a 780 high trip, beyond ±6: late, dangerous side, even though it was adjusted to 780
    expect(j.channels[1]).toEqual({ asFoundResult: 'out_dangerous', asLeftResult: 'in_tolerance', passed: false })
    // only 779 tripped in time; 2 are required. As found the function would have acted at 790, the 2nd channel to trip
    expect(j).toMatchObject({ tripped: 1, required: 2, acted: false, votedAsFound: 790 })
  })

  it('an early channel passes when adjusted into tolerance and fails when left as found', () => {
    const adjusted = judgeVotedChannels({
      ...highTrip,
      architecture: '2oo3',
      channels: [
        { asFound: 773, asLeft: 780 },
        { asFound: 781, asLeft: null },
        { asFound: 782, asLeft: null },
      ],
    })
    // 773 is 7 below a 780 high trip: early (safe side); it counts as tripped in time
    expect(adjusted.channels[0]).toEqual({ asFoundResult: 'out_safe', asLeftResult: 'in_tolerance', passed: true })
    expect(adjusted).toMatchObject({ tripped: 3, votedAsFound: 781, votedAsLeft: 781 })
    const leftAsFound = judgeVotedChannels({
      ...highTrip,
      architecture: '2oo3',
      channels: [
        { asFound: 773, asLeft: null },
        { asFound: 781, asLeft: null },
        { asFound: 782, asLeft: null },
      ],
    })
    expect(leftAsFound.channels[0]).toEqual({ asFoundResult: 'out_safe', asLeftResult: 'out', passed: false })
    // as found the 2nd-lowest is 781 (773, 781, 782)
    expect(leftAsFound.votedAsFound).toBe(781)
  })

  it('1oo2 low trip: one channel in time is enough; the M-th highest is the voted value', () => {
    const j = judgeVotedChannels({
      direction: 'low',
      setpoint: 20,
      tolerance: 0.5,
      architecture: '1oo2',
      channels: [
        { asFound: 19.6, asLeft: null },
        { asFound: 19.0, asLeft: null },
      ],
    })
    // 19.6 is 0.4 below 20: in tolerance; 19.0 is 1.0 below a low trip: late (dangerous side)
    expect(j.channels.map((c) => c.asFoundResult)).toEqual(['in_tolerance', 'out_dangerous'])
    // on a falling level the first channel to trip is the highest: 19.6
    expect(j).toMatchObject({ tripped: 1, required: 1, acted: true, votedAsFound: 19.6 })
    expect(j.channels[1].passed).toBe(false)
  })

  it('2oo2 needs both channels: one that did not trip loses the vote', () => {
    const j = judgeVotedChannels({
      ...highTrip,
      architecture: '2oo2',
      channels: [
        { asFound: 780, asLeft: null },
        { asFound: null, asLeft: null },
      ],
    })
    expect(j).toMatchObject({ tripped: 1, required: 2, acted: false, votedAsFound: null, votedAsLeft: null })
  })

  it('1oo2D votes 1oo2 on its channels', () => {
    expect(VOTING['1oo2D']).toEqual({ m: 1, n: 2 })
    const j = judgeVotedChannels({
      ...highTrip,
      architecture: '1oo2D',
      channels: [
        { asFound: null, asLeft: null },
        { asFound: 782, asLeft: null },
      ],
    })
    expect(j).toMatchObject({ tripped: 1, required: 1, acted: true, votedAsFound: 782 })
  })

  it('refuses a number of channels that does not match the architecture', () => {
    expect(() =>
      judgeVotedChannels({ ...highTrip, architecture: '2oo3', channels: [{ asFound: 780, asLeft: null }] }),
    ).toThrow(RangeError)
  })
})
