import { type Insertable, type Kysely, sql, type Transaction } from 'kysely'
import type { Database, MailOutboxTable } from '../../db/schema.ts'
import { pageWithTotal } from '../../db/paging.ts'

// Every query of the mail outbox: queued by business code, delivered by the worker, listed for admins.

type Q = Kysely<Database> | Transaction<Database>

export function insertMail(trx: Transaction<Database>, rows: Insertable<MailOutboxTable>[]) {
  return trx.insertInto('mail_outbox').values(rows).execute()
}

/** The next due message, urgent lane first, held FOR UPDATE SKIP LOCKED so no other instance sends it. */
export function claimNextMail(trx: Transaction<Database>, now: Date) {
  return trx
    .selectFrom('mail_outbox')
    .selectAll()
    .where('sent_at', 'is', null)
    .where('next_attempt_at', '<=', now)
    .orderBy('priority')
    .orderBy('id')
    .limit(1)
    .forUpdate()
    .skipLocked()
    .executeTakeFirst()
}

export function markMailSent(trx: Transaction<Database>, id: number, at: Date) {
  return trx
    .updateTable('mail_outbox')
    .set({ sent_at: at, attempts: sql`attempts + 1`, last_error: null })
    .where('id', '=', id)
    .execute()
}

export function markMailFailed(
  trx: Transaction<Database>,
  id: number,
  set: { attempts: number; last_error: string; next_attempt_at: Date },
) {
  return trx.updateTable('mail_outbox').set(set).where('id', '=', id).execute()
}

export interface MailListFilter {
  state?: 'queued' | 'sent' | 'failing'
  q?: string
  page: number
  pageSize: number
}

/** One page of the outbox, newest first, and the number of messages matching the filter. */
export function listMail(db: Q, f: MailListFilter) {
  let base = db.selectFrom('mail_outbox')
  if (f.state === 'sent') base = base.where('sent_at', 'is not', null)
  if (f.state === 'queued') base = base.where('sent_at', 'is', null).where('attempts', '=', 0)
  if (f.state === 'failing') base = base.where('sent_at', 'is', null).where('attempts', '>', 0)
  if (f.q) base = base.where((eb) => eb.or([eb('to_addr', 'ilike', `%${f.q}%`), eb('subject', 'ilike', `%${f.q}%`)]))
  return pageWithTotal(base, f, (q) => q.selectAll().orderBy('id', 'desc'))
}
