import type { AppAbility } from '../../../shared/abilities/index.ts'
import { authorize } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { listMail, type MailListFilter } from './mail.repository.ts'

/** The outbox with delivery state, newest first (admins). */
export async function listOutbox(deps: AppDeps, ability: AppAbility, f: MailListFilter) {
  authorize(ability, 'read', 'Mail')
  const { total, rows } = await listMail(deps.db, f)
  return {
    total,
    items: rows.map((r) => ({
      id: r.id,
      to: r.to_addr,
      subject: r.subject,
      text: r.text_body,
      topic: r.topic,
      createdAt: r.created_at.toISOString(),
      attempts: r.attempts,
      nextAttemptAt: r.next_attempt_at.toISOString(),
      sentAt: r.sent_at?.toISOString() ?? null,
      lastError: r.last_error,
    })),
  }
}
