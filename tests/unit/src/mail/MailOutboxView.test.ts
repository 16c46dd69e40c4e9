import { afterEach, describe, expect, it, vi } from 'vitest'
import type { MailItem } from '@shared/schemas/mail.ts'
import MailOutboxView from '@/features/mail/views/MailOutboxView.vue'
import { answerApi, mountView } from '../mount-view.ts'

// The mail outbox (docs/api.md, GET /api/mail): a row opens to show the message's text in one cell across the table.

const message = (id: number, subject: string, text: string): MailItem => ({
  id,
  to: 'approver@fernhollow.example',
  subject,
  text,
  topic: 'change-request',
  createdAt: '2026-11-30T08:15:00.000Z',
  attempts: 0,
  nextAttemptAt: '2026-11-30T08:15:00.000Z',
  sentAt: '2026-11-30T08:15:02.000Z',
  lastError: null,
})

describe('MailOutboxView', () => {
  afterEach(() => vi.unstubAllGlobals())

  it('opens a row to show its text across all the columns, and only that row', async () => {
    answerApi({
      'GET /mail': () => ({
        body: {
          items: [
            message(2, 'Change request #12 awaits your approval', 'Please review change request #12.'),
            message(1, 'Bypass of TZA-101 authorized', 'The bypass of TZA-101 is authorized.'),
          ],
          total: 2,
          page: 1,
          pageSize: 50,
        },
      }),
    })
    const w = await mountView(MailOutboxView, { user: { id: 1, roles: [] } })
    await vi.waitFor(() => expect(w.findAll('tbody tr')).toHaveLength(2))
    expect(w.text()).not.toContain('Please review change request #12.')

    await w.findAll('tbody tr')[0].find('button').trigger('click')
    await vi.waitFor(() => expect(w.text()).toContain('Please review change request #12.'))
    const rows = w.findAll('tbody tr')
    expect(rows).toHaveLength(3)
    const cell = rows[1].get('td')
    expect(cell.attributes('colspan')).toBe(String(w.findAll('thead th').length))
    expect(cell.text()).toBe('Please review change request #12.')
    expect(w.text()).not.toContain('The bypass of TZA-101 is authorized.')
  })
})
