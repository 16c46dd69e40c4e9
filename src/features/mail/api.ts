import type { ListResult } from '@shared/schemas/common.ts'
import type { MailItem, MailListQuery } from '@shared/schemas/mail.ts'
import { http } from '@/api/client'

/** Cache keys of the mail outbox (Pinia Colada). */
export const mailKeys = {
  all: ['mail'] as const,
  list: (q: MailListQuery) => ['mail', 'list', JSON.stringify(q)] as const,
}

export const listMail = (query: MailListQuery) => http.get<ListResult<MailItem>>('/mail', { ...query })
