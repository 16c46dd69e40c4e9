import { z } from 'zod'
import { ListQuerySchema } from './common.ts'

// The mail outbox as administrators read it (docs/api.md).

export const MAIL_STATES = ['queued', 'sent', 'failing'] as const
export type MailState = (typeof MAIL_STATES)[number]

/** `GET /api/mail`: paging, a text search over recipient and subject, and the delivery state. */
export const MailListQuerySchema = ListQuerySchema.extend({ state: z.enum(MAIL_STATES).optional() })
export type MailListQuery = Partial<z.infer<typeof MailListQuerySchema>>

/** One message of the outbox with its delivery state. */
export interface MailItem {
  id: number
  to: string
  subject: string
  text: string
  topic: string
  createdAt: string
  attempts: number
  nextAttemptAt: string
  /** null until delivered */
  sentAt: string | null
  lastError: string | null
}
