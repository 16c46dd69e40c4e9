import type { Transaction } from 'kysely'
import type { Clock } from '../../clock.ts'
import type { Database } from '../../db/schema.ts'
import { insertMail } from './mail.repository.ts'

export interface OutgoingMail {
  to: string
  subject: string
  text: string
  html?: string
  topic?: string
  /** Deliver before the rest of a backlog; by default the URGENT_TOPICS are. */
  urgent?: boolean
}

/**
 * Topics about protection lost now (a failed trip test leaving a limit degraded; a bypass requested, overdue or
 * escalated): they go in the urgent lane, delivered before any backlog of other mail (docs/security.md).
 */
export const URGENT_TOPICS: ReadonlySet<string> = new Set(['trip_test', 'bypass'])

/**
 * Queues mail in the business transaction: a rollback sends nothing, a commit is delivered by the worker.
 * Business code never sends mail directly.
 */
export async function enqueueMail(
  trx: Transaction<Database>,
  clock: Clock,
  mails: OutgoingMail | OutgoingMail[],
): Promise<void> {
  const list = Array.isArray(mails) ? mails : [mails]
  if (!list.length) return
  const now = clock.now()
  await insertMail(
    trx,
    list.map((m) => ({
      to_addr: m.to,
      subject: m.subject,
      text_body: m.text,
      html_body: m.html ?? null,
      topic: m.topic ?? 'general',
      priority: (m.urgent ?? URGENT_TOPICS.has(m.topic ?? 'general')) ? (0 as const) : (1 as const),
      created_at: now,
      next_attempt_at: now,
    })),
  )
}

/** A notice to people: its subject and topic, its paragraphs and the link it gives (the bodies mailBodies writes). */
export interface Notice {
  subject: string
  topic: string
  paragraphs: string[]
  link?: { url: string; label: string }
}

/**
 * Queues the same notice to each of `people`, in the business transaction: one mail to each distinct address (a person
 * named twice, for instance as requester and as supervisor, gets one).
 */
export function mailNotice(
  trx: Transaction<Database>,
  clock: Clock,
  people: readonly { email: string }[],
  notice: Notice,
): Promise<void> {
  const { subject, topic, paragraphs, link } = notice
  const mail = { subject, topic, ...mailBodies(paragraphs, link) }
  const addresses = [...new Set(people.map((p) => p.email))]
  return enqueueMail(
    trx,
    clock,
    addresses.map((to) => ({ ...mail, to })),
  )
}

/** The link a mail gives to a record's page: "Open <what> #<id>" at `<appUrl>/<path>/<id>`. */
export function recordLink(appUrl: string, path: string, what: string, id: number) {
  return { url: `${appUrl}/${path}/${id}`, label: `Open ${what} #${id}` }
}

const esc = (s: string) =>
  s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!)

/** Plain-text and HTML bodies from paragraphs and an optional link. */
export function mailBodies(
  paragraphs: string[],
  link?: { url: string; label: string },
): { text: string; html: string } {
  const text = [
    ...paragraphs,
    ...(link ? [`${link.label}: ${link.url}`] : []),
    '',
    "— Limitkeeper (this register does not replace the safety system or the plant's procedures)",
  ].join('\n\n')
  const html =
    `<div style="font-family:Roboto,Arial,sans-serif">${paragraphs.map((p) => `<p>${esc(p)}</p>`).join('')}` +
    (link ? `<p><a href="${esc(link.url)}">${esc(link.label)}</a></p>` : '') +
    '<p style="color:#666;font-size:12px">' +
    "Limitkeeper. This register does not replace the safety system or the plant's procedures.</p></div>"
  return { text, html }
}
