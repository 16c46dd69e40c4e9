import { flushPromises } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import type { Limit } from '@shared/schemas/register.ts'
import type { TripTestDto } from '@shared/schemas/trip-tests.ts'
import type { Role } from '@shared/schemas/users.ts'
import AppSignDialog from '@/components/AppSignDialog.vue'
import TripTestDetailView from '@/features/trip-tests/views/TripTestDetailView.vue'
import { SITE_CHOICES, mountRecordPage, answerApi, type Routes } from '../mount-view.ts'
import { ME, type Meaning, RECORDER, record } from './trip-test-fixture.ts'

// The trip-test record's page offers the edit and signing buttons the trip-test rule book allows this user
// (docs/trip-tests.md#who-signs): the recorder edits and signs as performer; after the performer, a witness (never
// the performer), a technician for the return to service, then operations accept the equipment back. The page shows
// what the record's `actions` say, as the server answers them for the user.

const limit = (protectionState: Limit['protectionState']) => ({ id: 5, tag: 'TSHH-101', protectionState }) as Limit

function api(t: TripTestDto, more: Routes = {}) {
  return answerApi({
    [`GET /trip-tests/${t.id}`]: () => ({ body: t }),
    'GET /limits/5': () => ({ body: limit('in_service') }),
    'GET /limits/5/degradation': () => ({ body: { items: [] } }),
    ...SITE_CHOICES,
    ...more,
  })
}

async function open(t: TripTestDto, roles: Role[], userId: number) {
  return mountRecordPage(TripTestDetailView, t.id, { id: userId, roles })
}

type Wrapper = Awaited<ReturnType<typeof open>>
const BUTTONS = ['edit-test', 'sign-performed', 'sign-witnessed', 'sign-returned_to_service', 'sign-accepted']
const shown = (w: Wrapper) => BUTTONS.filter((b) => w.find(`[data-test="${b}"]`).exists())

afterEach(() => vi.unstubAllGlobals())

describe('TripTestDetailView: buttons follow the trip-test rule book', () => {
  it.each<[string, [Meaning, number][], Role[], number, string[]]>([
    [
      'the technician who recorded it edits and signs as performer',
      [],
      ['technician'],
      RECORDER,
      ['edit-test', 'sign-performed'],
    ],
    ['another technician waits for the performer', [], ['technician'], ME, []],
    ['a shift supervisor waits for the performer', [], ['shift_supervisor'], ME, []],
    [
      'after the performer, another technician witnesses and signs the return to service',
      [['performed', RECORDER]],
      ['technician'],
      ME,
      ['sign-witnessed', 'sign-returned_to_service'],
    ],
    [
      'the performer does not witness their own test',
      [['performed', RECORDER]],
      ['technician'],
      RECORDER,
      ['sign-returned_to_service'],
    ],
    ['an approver witnesses', [['performed', RECORDER]], ['approver'], ME, ['sign-witnessed']],
    [
      'an operator accepts the equipment back only after the return to service',
      [['performed', RECORDER]],
      ['operator'],
      ME,
      [],
    ],
    [
      'an operator accepts once the return to service is signed',
      [
        ['performed', RECORDER],
        ['returned_to_service', 8],
      ],
      ['operator'],
      ME,
      ['sign-accepted'],
    ],
    [
      'a shift supervisor who is also a technician: witness and accept, the return to service being signed',
      [
        ['performed', RECORDER],
        ['returned_to_service', 8],
      ],
      ['shift_supervisor', 'technician'],
      ME,
      ['sign-witnessed', 'sign-accepted'],
    ],
    [
      'an auditor reads only',
      [
        ['performed', RECORDER],
        ['returned_to_service', 8],
      ],
      ['auditor'],
      ME,
      [],
    ],
    [
      'nothing is left to sign on a completed record',
      [
        ['performed', RECORDER],
        ['witnessed', 9],
        ['returned_to_service', 8],
        ['accepted', 10],
      ],
      ['technician', 'shift_supervisor'],
      ME,
      [],
    ],
  ])('%s', async (_what, signedAs, roles, userId, expected) => {
    const t = record(signedAs, roles, userId)
    api(t)
    const w = await open(t, roles, userId)
    expect(w.find('[data-test="limit-protection"]').text()).toContain('In service')
    expect(shown(w)).toEqual(expected)
  })

  it('says what a signature waits for where the user may not sign yet', async () => {
    const t = record([['performed', RECORDER]], ['operator'], ME)
    api(t)
    const w = await open(t, ['operator'], ME)
    expect(w.find('[data-test="signature-accepted"]').text()).toContain('After the return-to-service check is signed')
  })
})

describe('TripTestDetailView: the data-fetching layer after a signature', () => {
  it('shows the signed record and fetches the limit again, whose state the signature changed', async () => {
    const before = record([], ['technician'], RECORDER)
    const after = record([['performed', RECORDER]], ['technician'], RECORDER)
    // a failed test degrades the limit when its performer signs: the second answer for the limit is the new state
    let limitReads = 0
    let signed = false
    const calls = api(before, {
      [`GET /trip-tests/${before.id}`]: () => ({ body: signed ? after : before }),
      'GET /limits/5': () => ({ body: limit(++limitReads === 1 ? 'in_service' : 'degraded') }),
      [`POST /trip-tests/${before.id}/signatures`]: () => {
        signed = true
        return { body: after }
      },
    })
    const w = await open(before, ['technician'], RECORDER)
    expect(w.find('[data-test="limit-protection"]').text()).toContain('In service')
    expect(w.find('[data-test="sign-performed"]').exists()).toBe(true)

    await w.findComponent(AppSignDialog).props('sign')('my password', '')
    await flushPromises()

    expect(calls.filter((c) => c.method === 'POST')).toEqual([
      {
        method: 'POST',
        path: '/trip-tests/31/signatures',
        body: { meaning: 'performed', password: 'my password', comment: '' },
      },
    ])
    expect(calls.filter((c) => c.method === 'GET' && c.path === '/limits/5')).toHaveLength(2)
    expect(w.find('[data-test="limit-protection"]').text()).toContain('DEGRADED')
    expect(w.find('[data-test="signer-performed"]').text()).toBe('Tomas Ferrant')
    expect(w.find('[data-test="sign-performed"]').exists()).toBe(false)
    expect(w.find('[data-test="edit-test"]').exists()).toBe(false)
  })
})
