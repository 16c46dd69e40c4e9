import type { ChangeRequestDto } from '../../../shared/schemas/change-requests.ts'
import { closingNote, headedTable, pageFooter, renderPdf } from '../../pdf.ts'

const fmt = (v: unknown): string =>
  v === null || v === undefined || v === '' ? '—' : typeof v === 'object' ? JSON.stringify(v) : String(v)

/** The printable record of a change request: items with their diffs, checklist, and the signature block. */
export function changeRequestPdf(cr: ChangeRequestDto, printedAt: Date): Promise<Buffer> {
  const items = cr.items.flatMap((item) => [
    {
      text:
        `${item.position + 1}. ${item.kind === 'instrument' ? 'Instrument' : 'Limit'} ${item.targetTag} — ` +
        `${item.kind}${item.silRated ? ' (SIL-rated)' : ''}`,
      style: 'h3',
    },
    {
      ...headedTable(
        ['30%', '35%', '35%'],
        ['Field', 'From', 'To'],
        Object.entries(item.changes).map(([field, c]) => [field, `${fmt(c.from)}`, `${fmt(c.to)}`]),
      ),
      layout: 'lightHorizontalLines',
      margin: [0, 2, 0, 4],
    },
    {
      text:
        `Unit: ${item.unit || '—'} · implemented: ` +
        (item.implementedAt
          ? `${item.implementedAt} by ${item.implementedBy}, read back ${fmt(item.readBack)}`
          : 'not yet'),
      fontSize: 8,
      margin: [0, 0, 0, 6],
    },
  ])
  return renderPdf({
    info: { title: `Change request #${cr.id}`, creator: 'Limitkeeper' },
    footer: pageFooter(`Change request #${cr.id} · content hash ${cr.contentHash}`),
    content: [
      { text: `Change request #${cr.id}: ${cr.title}`, style: 'h1' },
      {
        text:
          `Site ${cr.siteCode} · ${cr.type} change · status ${cr.status} · ` +
          `proposed by ${cr.proposerName} · printed ${printedAt.toISOString()}`,
        margin: [0, 0, 0, 8],
      },
      {
        columns: [
          { width: '*', stack: [{ text: 'Rationale', style: 'h3' }, { text: cr.rationale || '—' }] },
          {
            width: 200,
            stack: [
              { text: 'Hazard review reference', style: 'h3' },
              { text: cr.hazardReference || '—' },
              ...(cr.expiresAt ? [{ text: 'Expires', style: 'h3' }, { text: cr.expiresAt }] : []),
            ],
          },
        ],
      },
      { text: 'Items', style: 'h2' },
      ...items,
      { text: 'Impact checklist', style: 'h2' },
      {
        ul: cr.checklist.map(
          (c) => `${c.doneAt ? '☑' : '☐'} ${c.label}${c.doneAt ? ` — ${c.doneBy}, ${c.doneAt}` : ''}`,
        ),
      },
      { text: 'Electronic signatures', style: 'h2' },
      {
        ...headedTable(
          ['22%', '14%', '24%', '*'],
          ['Name', 'Meaning', 'Time (UTC)', 'Content hash / state'],
          cr.signatures.map((s) => [
            s.name,
            s.meaning,
            s.at,
            `${s.contentHash}` +
              (s.voided
                ? ` — VOID (${s.voidReason})`
                : s.matchesContent
                  ? ''
                  : ' — does not match the current content'),
          ]),
        ),
        layout: 'lightHorizontalLines',
      },
      ...(cr.pssr ? [{ text: 'Pre-start-up safety review', style: 'h2' }, { text: fmt(cr.pssr) }] : []),
      closingNote(
        'Limitkeeper records what the safety system should do; it is not the safety system. ' +
          "Verify every setting on the device under the plant's own procedures.",
        16,
      ),
    ],
    styles: {
      h1: { fontSize: 14, bold: true, margin: [0, 0, 0, 4] },
      h2: { fontSize: 11, bold: true, margin: [0, 10, 0, 4] },
      h3: { fontSize: 9, bold: true, margin: [0, 4, 0, 2] },
    },
  })
}
